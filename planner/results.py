"""What a run, a comparison of plans and a hindcast produce: the objects reports read.

The runs (:mod:`planner.runs`) build these; the report writers (:mod:`planner.report`) only
read them, so a page never recomputes, rescores or re-reads what a run made.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from planner.forecast.result import ForecastResult
from planner.hospital.model import HospitalModel
from planner.hospital.result import HospitalResult
from planner.records.ward_history import WardHistory
from planner.scenario import Scenario
from planner.scenario_hospital import HospitalScenario
from planner.simulate.model import WardModel
from planner.simulate.result import WardResult
from planner.summaries.hospital import HospitalWeeks
from planner.summaries.sizing import ClassicalSizes, SizingTarget
from planner.summaries.weekly import Outlook, WeeklyPaths

#: The file beside a hindcast's tables that ties them to one setup (see
#: :mod:`planner.report.hindcast_report`).
HINDCAST_SIDECAR = "hindcast.json"


@dataclass(frozen=True)
class RunSummary:
    """The tables of a run across paths: ``weekly`` (weekly.csv), ``daily`` (daily.csv),
    ``shifts`` (shifts.csv), the headline :class:`Outlook`, the recorded midnight census
    of the weeks before the forecast (None without episodes) and ``shift_weekdays``
    (shift_weekdays.csv: the chance of a short shift and of a full ward by shift and
    weekday)."""

    weekly: pd.DataFrame
    daily: pd.DataFrame
    shifts: pd.DataFrame
    outlook: Outlook
    recent_census: pd.Series | None
    shift_weekdays: pd.DataFrame | None = None


@dataclass(frozen=True)
class SizingResult:
    """The fewest beds that keep ``target`` in every forecast week from ``start``, found on
    common random numbers (:mod:`planner.runs.sizing`): ``beds_needed`` (the ward's answer),
    ``near_target`` (a different seed could move it by one bed), ``table`` (sizing.csv: the
    beds each week needs and the answer, with risks, errors and classical sizes),
    ``candidates`` (every bed count simulated, per week: risk and error), ``classical`` (the
    classical sizes at the horizon's mean load), ``roster`` (roster.csv: nurses needed per
    shift and weekday with ``roster_beds`` beds), ``current_beds`` (the scenario's)."""

    scenario: Scenario
    target: SizingTarget
    start: pd.Timestamp
    current_beds: int
    beds_needed: int
    near_target: bool
    table: pd.DataFrame
    candidates: pd.DataFrame
    classical: ClassicalSizes
    roster: pd.DataFrame
    roster_beds: int
    paths: int
    seed: int


@dataclass(frozen=True)
class RunResult:
    """Everything one run produced, from the forecast to the weekly measures per path and
    the summary tables."""

    scenario: Scenario
    history: WardHistory
    forecast: ForecastResult
    model: WardModel
    ward: WardResult
    weekly: WeeklyPaths
    summary: RunSummary
    paths: int
    seed: int
    timings: dict[str, float]
    sizing: SizingResult | None = None


@dataclass(frozen=True)
class Comparison:
    """Plans compared with the first: the runs (the first is the reference), the
    comparison.csv table, the costs.csv table (None when no plan gives costs) and the glance
    table (one row per plan over the horizon). ``paired``: the plans share their history and
    forecast and were run with common random numbers (differences path by path); otherwise
    they were compared as independent runs, each with its own seed."""

    runs: tuple[RunResult, ...]
    table: pd.DataFrame
    costs: pd.DataFrame | None
    glance: pd.DataFrame
    paired: bool = True


@dataclass(frozen=True)
class HindcastResult:
    """``table``: the hindcast.csv rows; ``summary``: scores by horizon week (0 = all);
    ``reliability``: predicted-probability bins per threshold; ``pit_counts``: PIT histogram
    (10 bins) of the pit_sample days with its chi-square statistic and p-value;
    ``last_day``: the last day of the history; ``weeks``: whole weeks from the first origin
    to the end of the history."""

    scenario_name: str
    scenario_key: str
    origins: pd.DatetimeIndex
    horizon_days: int
    last_day: pd.Timestamp
    weeks: int
    paths: int
    seed: int
    table: pd.DataFrame
    summary: pd.DataFrame
    reliability: pd.DataFrame
    pit_counts: np.ndarray
    chi_square: float
    p_value: float
    notes: tuple[str, ...]

    def overall(self) -> pd.Series:
        """The summary row over all horizon weeks."""
        return self.summary[self.summary["horizon_week"] == 0].iloc[0]


@dataclass(frozen=True)
class HindcastQuote:
    """What a run report quotes from the newest hindcast saved for the same setup: weeks
    covered, number of past start dates, the day it was made and the share of days inside
    its 80% census band."""

    weeks: int
    origins: int
    created: str
    coverage_80: float


@dataclass(frozen=True)
class HospitalRun:
    """Everything a hospital run produced: one :class:`planner.results.RunResult` per ward
    (hospital order), the hospital model and result, the weekly measures and tables
    (:mod:`planner.summaries.hospital`), and ``forecast_note``: a correlation the forecasts
    could not keep ("" when none)."""

    scenario: HospitalScenario
    wards: tuple[RunResult, ...]
    model: HospitalModel
    result: HospitalResult
    weeks: HospitalWeeks
    table: pd.DataFrame
    outlying: pd.DataFrame
    placements: pd.DataFrame
    forecast_note: str
    paths: int
    seed: int
    timings: dict[str, float]


@dataclass(frozen=True)
class HospitalComparison:
    """The plans' runs (the first is the reference), the weekly comparison table and the
    glance table (one row per plan over the horizon)."""

    runs: tuple[HospitalRun, ...]
    table: pd.DataFrame
    glance: pd.DataFrame


@dataclass(frozen=True)
class HospitalSizing:
    """``beds``: beds per ward found (hospital order); ``risk`` and ``risk_se``: the highest
    weekly chance of some patient finding no bed anywhere, at those beds; ``no_bed``: the
    expected patients finding no bed anywhere over the forecast; ``met``: the target holds;
    ``steps``: one row per step (what changed, the beds, total, risk, unmet); ``least_gain``:
    the least saving a move between wards had to make."""

    scenario: HospitalScenario
    target: float
    total: int | None
    start_beds: tuple[int, ...]
    beds: tuple[int, ...]
    risk: float
    risk_se: float
    unmet: float
    met: bool
    steps: pd.DataFrame
    least_gain: float
    paths: int
    seed: int

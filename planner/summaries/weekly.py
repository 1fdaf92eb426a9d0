"""The weekly shortfall table: from simulated paths to probabilities with standard errors.

Weeks are 7-day blocks counted from the first forecast day (week 1 = days 1-7). For each path
and week:

* bed shortfall: at some moment of the week a patient needed a bed and none was free (the
  patient waited, policy "wait", or was placed elsewhere, policy "divert");
* admissions: patients arriving that week;
* patients affected: patients arriving that week who waited or were diverted;
* wait hours: hours waited by patients arriving that week;
* peak census: the most beds occupied at any moment of the week;
* staff shortfall: at least one shift of the week had fewer nurses rostered than required;
  short shifts: how many;
* with a planned list: planned patients given a bed that week, planned patients cancelled
  for want of a bed, and whether at least one was cancelled.

Probabilities are shares of paths; ``_se`` columns are Monte Carlo standard errors across the
independent paths (:mod:`planner.summaries.monte_carlo`).
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import date

import numpy as np
import pandas as pd

from planner.simulate.result import WardResult
from planner.summaries.monte_carlo import mean_se, share_se

#: Weeks of the headline figure: the chance of any bed shortfall in the first weeks.
HEADLINE_WEEKS = 4


@dataclass(frozen=True)
class WeeklyPaths:
    """Per-path weekly measures, arrays of shape (paths, weeks)."""

    week_start: pd.DatetimeIndex
    bed_shortfall: np.ndarray
    admissions: np.ndarray
    patients_affected: np.ndarray
    diverted: np.ndarray
    wait_hours: np.ndarray
    peak_census: np.ndarray
    staff_shortfall: np.ndarray
    short_shifts: np.ndarray
    beds_open: np.ndarray  # (weeks,) mean beds open over the week's days
    bed_days: np.ndarray  # (weeks,) beds open summed over the week's days
    nurse_shifts: np.ndarray  # (weeks,) rostered nurse-shifts in the week
    planned_admitted: np.ndarray | None = None  # with a planned list
    cancelled: np.ndarray | None = None  # with a planned list

    @property
    def paths(self) -> int:
        return self.bed_shortfall.shape[0]


def _weeks(grid: np.ndarray, how: str) -> np.ndarray:
    """Complete 7-day blocks of a (paths, days) array, reduced by ``how`` ("sum" or "max")."""
    weeks = grid.shape[1] // 7
    blocks = grid[:, : weeks * 7].reshape(grid.shape[0], weeks, 7)
    return blocks.sum(axis=2) if how == "sum" else blocks.max(axis=2)


def weekly_paths(
    result: WardResult, start: date | pd.Timestamp | None = None, planned: bool = False
) -> WeeklyPaths:
    """Reduce the simulated ward to per-path weekly measures, weeks counted from ``start``
    (default: the first simulated day; a later day drops the days before it); ``planned``:
    the ward has a planned list (its measures are kept)."""
    first = pd.Timestamp(result.start)
    start = first if start is None else pd.Timestamp(start)
    skip = (start - first).days
    if skip < 0:
        raise ValueError(f"start {start.date()} is before the simulation's first day")

    def grid(values: np.ndarray) -> np.ndarray:
        return np.asarray(values[:, skip:], dtype=float)

    affected = grid(result.waited) + grid(result.diverted)
    short_grid = grid(result.shortfall > 0).sum(axis=2)
    beds = grid(result.beds_open[None, :])
    rostered = grid(result.nurses_rostered[None, :, :]).sum(axis=2)
    weeks = (result.days - skip) // 7
    patients_affected = _weeks(affected, "sum")
    short_shifts = _weeks(short_grid, "sum")
    bed_days = _weeks(beds, "sum")[0]
    return WeeklyPaths(
        week_start=pd.date_range(start, periods=weeks, freq="7D"),
        bed_shortfall=patients_affected > 0,
        admissions=_weeks(grid(result.admissions), "sum"),
        patients_affected=patients_affected,
        diverted=_weeks(grid(result.diverted), "sum"),
        wait_hours=_weeks(grid(result.wait_hours), "sum"),
        peak_census=_weeks(grid(result.peak_occupancy), "max"),
        staff_shortfall=short_shifts > 0,
        short_shifts=short_shifts,
        beds_open=bed_days / 7.0,
        bed_days=bed_days,
        nurse_shifts=_weeks(rostered, "sum")[0],
        planned_admitted=_weeks(grid(result.planned_admissions), "sum") if planned else None,
        cancelled=_weeks(grid(result.cancelled), "sum") if planned else None,
    )


def weekly_table(weekly: WeeklyPaths) -> pd.DataFrame:
    """One row per forecast week (columns documented in the README, "weekly.csv")."""
    p_bed, p_bed_se = share_se(weekly.bed_shortfall)
    p_staff, p_staff_se = share_se(weekly.staff_shortfall)
    affected, affected_se = mean_se(weekly.patients_affected)
    peak = np.quantile(weekly.peak_census, [0.5, 0.9], axis=0)
    table = pd.DataFrame(
        {
            "week_start": weekly.week_start.strftime("%Y-%m-%d"),
            "p_bed_shortfall": p_bed,
            "p_bed_shortfall_se": p_bed_se,
            "expected_patients_affected": affected,
            "expected_patients_affected_se": affected_se,
            "expected_diverted": weekly.diverted.mean(axis=0),
            "expected_wait_hours": weekly.wait_hours.mean(axis=0),
            "peak_census_p50": peak[0],
            "peak_census_p90": peak[1],
            "beds_open": weekly.beds_open,
            "p_staff_shortfall": p_staff,
            "p_staff_shortfall_se": p_staff_se,
            "expected_short_shifts": weekly.short_shifts.mean(axis=0),
        }
    )
    if weekly.cancelled is not None:
        p_cancel, p_cancel_se = share_se(weekly.cancelled > 0)
        table["expected_planned_admitted"] = weekly.planned_admitted.mean(axis=0)
        table["expected_cancelled"] = weekly.cancelled.mean(axis=0)
        table["p_cancellation"] = p_cancel
        table["p_cancellation_se"] = p_cancel_se
    return table


def any_shortfall(weekly: WeeklyPaths, weeks: int) -> tuple[float, float]:
    """Probability (and SE) of at least one bed shortfall in the first ``weeks`` weeks."""
    hit = weekly.bed_shortfall[:, :weeks].any(axis=1)
    share, se = share_se(hit[:, None])
    return float(share[0]), float(se[0])


@dataclass(frozen=True)
class Outlook:
    """The headline of a run: over its first ``weeks`` weeks, the probability (share of paths)
    of at least one moment with no free bed, its standard error, and the mean number of
    patients who found no free bed."""

    weeks: int
    p_bed_shortfall: float
    p_bed_shortfall_se: float
    expected_patients_affected: float


def outlook(weekly: WeeklyPaths, weeks: int = HEADLINE_WEEKS) -> Outlook:
    """The :class:`Outlook` of the first ``weeks`` weeks (at most the horizon)."""
    weeks = min(weeks, weekly.bed_shortfall.shape[1])
    share, se = any_shortfall(weekly, weeks)
    affected = weekly.patients_affected[:, :weeks].sum(axis=1).mean()
    return Outlook(weeks, share, se, float(affected))

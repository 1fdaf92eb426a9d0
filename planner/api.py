"""The Python interface: the command line's jobs as functions that return result objects.

>>> import planner
>>> plan = planner.load_scenario()                      # the bundled demo ward
>>> run = planner.run(plan, paths=500)
>>> run.weekly[["week_start", "p_bed_shortfall"]]        # weekly.csv as a DataFrame
>>> more = planner.run(plan.with_changes({"beds.base": 30}), paths=500)
>>> both = planner.compare([plan, plan.with_changes({"beds.base": 30, "name": "30 beds"})])
>>> both.table                                           # comparison.csv as a DataFrame
>>> wards = planner.run_hospital("scenarios/kestrel_vale_hospital.toml", paths=500)
>>> wards.table                                          # hospital.csv as a DataFrame

Every function takes the options of the command line (``paths``, ``seed``, ``engine``,
``jobs``) with the same defaults: the scenario's paths, seed and engine, and all cores. A
history may be given as pandas objects (``admissions``: daily emergency admissions as a Series
on consecutive days; ``episodes``: a DataFrame with ``admitted_at`` and ``discharged_at``, and
optionally ``method``), which then replace every history file the scenario names. Results are
decision support: staffing and capacity decisions follow local policy, safe-staffing review
and professional judgement; nurse ratios are minimums, not guarantees.
"""

from __future__ import annotations

import os
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

import pandas as pd

from planner.records.frames import HistoryFrames
from planner.results import (
    Comparison,
    HindcastResult,
    HospitalComparison,
    HospitalRun,
    HospitalSizing,
    RunResult,
    SizingResult,
)
from planner.scenario import Scenario, load_scenario
from planner.simulate.model import RunOptions
from planner.summaries.sizing import requested_target

__all__ = ["Run", "compare", "compare_hospitals", "hindcast", "load_scenario", "run",
           "run_hospital", "size", "size_hospital", "write_report"]  # fmt: skip


@dataclass(frozen=True)
class Run:
    """One run: ``weekly``, ``daily`` and ``shifts`` are the tables of weekly.csv, daily.csv
    and shifts.csv; ``headline`` the chance of running short in the first weeks (with its
    standard error); ``result`` everything else (forecast, ward model, per-path measures)."""

    result: RunResult

    @property
    def weekly(self) -> pd.DataFrame:
        return self.result.summary.weekly

    @property
    def daily(self) -> pd.DataFrame:
        return self.result.summary.daily

    @property
    def shifts(self) -> pd.DataFrame:
        return self.result.summary.shifts

    @property
    def headline(self):
        return self.result.summary.outlook

    @property
    def scenario(self) -> Scenario:
        return self.result.scenario


def _options(paths, seed, engine, jobs) -> RunOptions:
    return RunOptions(paths, seed, engine, jobs if jobs is not None else os.cpu_count() or 1)


def _frames(admissions, episodes) -> HistoryFrames | None:
    if admissions is None and episodes is None:
        return None
    return HistoryFrames(admissions, episodes)


def _scenario(plan: Scenario | str | Path | None) -> Scenario:
    return plan if isinstance(plan, Scenario) else load_scenario(plan)


def run(
    plan: Scenario | str | Path | None = None,
    *,
    admissions: pd.Series | pd.DataFrame | None = None,
    episodes: pd.DataFrame | None = None,
    paths: int | None = None,
    seed: int | None = None,
    engine: str | None = None,
    jobs: int | None = None,
) -> Run:
    """Forecast, simulate and summarise one plan (a scenario, a scenario file, or None for
    the bundled demo), as ``planner run`` does."""
    from planner.runs.run import load_history, run_scenario

    scenario = _scenario(plan)
    history = load_history(scenario, _frames(admissions, episodes))
    return Run(run_scenario(scenario, _options(paths, seed, engine, jobs), history=history))


def compare(
    plans: Sequence[Scenario | str | Path],
    *,
    admissions: pd.Series | pd.DataFrame | None = None,
    episodes: pd.DataFrame | None = None,
    paths: int | None = None,
    seed: int | None = None,
    engine: str | None = None,
    jobs: int | None = None,
) -> Comparison:
    """Run plans with common random numbers and compare them with the first, as
    ``planner compare`` does: ``table``, ``costs`` and ``glance`` are comparison.csv,
    costs.csv and the glance table; ``runs`` the plans' runs."""
    from planner.runs.compare import compare_scenarios

    options = _options(paths, seed, engine, jobs)
    return compare_scenarios(list(plans), options, frames=_frames(admissions, episodes))


def size(
    plan: Scenario | str | Path | None = None,
    *,
    measure: str | None = None,
    target: float | None = None,
    paths: int | None = None,
    seed: int | None = None,
    jobs: int | None = None,
) -> SizingResult:
    """The fewest beds (and the nurses per shift) that keep a risk measure at or under a
    target in every forecast week, as ``planner size`` does; ``measure`` and ``target``
    default to the scenario's [sizing] table, else the command's defaults."""
    from planner.runs.sizing import size_scenario

    scenario = _scenario(plan)
    chosen = requested_target(scenario, {"measure": measure, "target": target})
    return size_scenario(scenario, chosen, _options(paths, seed, None, jobs))


def hindcast(plan: Scenario | str | Path | None = None, *, paths: int = 300,
             jobs: int | None = None) -> HindcastResult:  # fmt: skip
    """Start the plan at past dates with only what was known then and score its census
    forecast against the census that happened, as ``planner hindcast`` does (from the
    scenario's episode file)."""
    from planner.runs.hindcast import hindcast as run_hindcast

    workers = jobs if jobs is not None else os.cpu_count() or 1
    return run_hindcast(_scenario(plan), paths=paths, workers=workers)


def run_hospital(
    hospital: str | Path,
    *,
    paths: int | None = None,
    seed: int | None = None,
    engine: str | None = None,
    jobs: int | None = None,
) -> HospitalRun:
    """Run a hospital file's wards together, as ``planner run HOSPITAL`` does: ``table`` is
    hospital.csv, ``outlying`` outlying.csv, ``placements`` placements.csv, ``wards`` one run
    per ward (each with its ``summary.weekly``)."""
    from planner.runs.hospital import run_hospital as run_wards
    from planner.scenario_hospital import load_hospital

    return run_wards(load_hospital(hospital), _options(paths, seed, engine, jobs))


def compare_hospitals(
    plans: Sequence[str | Path],
    *,
    paths: int | None = None,
    seed: int | None = None,
    engine: str | None = None,
    jobs: int | None = None,
) -> HospitalComparison:
    """Compare hospital plans path by path with the first, as ``planner compare`` does:
    ``table`` is comparison.csv, ``glance`` glance.csv, ``runs`` the plans' runs."""
    from planner.runs.hospital_compare import compare_hospitals as compare_plans

    return compare_plans(list(plans), _options(paths, seed, engine, jobs))


def size_hospital(
    hospital: str | Path,
    *,
    target: float = 0.05,
    total: int | None = None,
    paths: int | None = None,
    seed: int | None = None,
) -> HospitalSizing:
    """Beds per ward that keep the weekly chance that some patient finds no bed anywhere at
    or under ``target``: the fewest in all, or the best split of ``total`` beds, as ``planner
    size HOSPITAL`` does (``beds``, ``risk``, ``steps``)."""
    from planner.runs.hospital_sizing import size_hospital as size_wards
    from planner.scenario_hospital import load_hospital

    return size_wards(load_hospital(hospital), target, total, _options(paths, seed, None, 1))


def write_report(result, folder: str | Path) -> Path:
    """Write the files and report page of a run, a comparison, a hospital run, a hospital
    comparison or a hospital sizing into ``folder`` (made if needed), as the command line
    does; returns the folder."""
    from planner.report.compare_report import write_compare_files
    from planner.report.hospital_compare_report import write_hospital_compare_files
    from planner.report.hospital_report import write_hospital_files
    from planner.report.hospital_sizing_report import write_hospital_sizing_files
    from planner.report.run_report import write_run_files

    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    writers = {
        Run: lambda: write_run_files(result.result, folder),
        Comparison: lambda: write_compare_files(result, folder),
        HospitalRun: lambda: write_hospital_files(result, folder),
        HospitalComparison: lambda: write_hospital_compare_files(result, folder),
        HospitalSizing: lambda: write_hospital_sizing_files(result, folder),
    }
    if type(result) not in writers:
        raise TypeError(f"write_report: no report for a {type(result).__name__}")
    writers[type(result)]()
    return folder

"""Comparing ward plans with common random numbers.

Every scenario is run with the first scenario's seed and number of paths, so path i of every
plan sees the same forecast admissions, the same arrival times and the same stays: a
difference between plans comes from the plans, not from noise. Differences to the first
scenario are computed path by path, and their standard error is the standard deviation of
the paired differences over sqrt(n) (Source: Law, Simulation Modeling and Analysis, 5th ed.,
section 11.2, common random numbers and the paired-t interval). For contrast the table also
gives the standard error two independent runs would have, sqrt(se_a^2 + se_b^2).

Costs over the horizon (units of the scenario's ``[costs]``): plan cost = bed-days open x
``bed_day`` + rostered nurse shifts x ``nurse_shift``; cost of affected patients = expected
diverted patients x ``diverted_patient`` + expected waiting hours x ``waiting_hour``. A
shortfall is one patient who found no free bed (waited or diverted); the incremental cost per
shortfall avoided is the change in plan cost divided by the shortfalls avoided.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from planner.errors import PlannerError
from planner.pipeline import RunResult, load_history, run_scenario
from planner.report.weekly import mean_se, weekly_table
from planner.scenario import Scenario, load_scenario

MEASURES = {
    "p_bed_shortfall": "bed_shortfall",
    "p_staff_shortfall": "staff_shortfall",
    "expected_patients_affected": "patients_affected",
}


@dataclass(frozen=True)
class Comparison:
    runs: tuple[RunResult, ...]
    table: pd.DataFrame
    costs: pd.DataFrame | None


def _forecast_key(scenario: Scenario) -> tuple:
    return (
        scenario.admissions_file,
        scenario.episodes_file,
        scenario.forecast,
        scenario.horizon_weeks,
        scenario.start,
    )


def _check_alike(scenarios: list[Scenario]) -> None:
    first = scenarios[0]
    for other in scenarios[1:]:
        for key in ("horizon_weeks", "start"):
            if getattr(other, key) != getattr(first, key):
                raise PlannerError(
                    f"{other.source}: {key}: {getattr(other, key)} differs from "
                    f"{getattr(first, key)} in {first.source.name}; compared plans must "
                    f"cover the same weeks"
                )


def _run_one(file: Path, paths: int, seed: int, engine: str | None) -> RunResult:
    """One scenario of a comparison, as run on a cluster worker."""
    scenario = load_scenario(file)
    return run_scenario(scenario, paths, seed, None, None, engine or scenario.engine, 1)


def run_all(
    files: list[Path],
    paths: int | None,
    seed: int | None,
    progress=None,
    engine=None,
    jobs=1,
    scheduler: str | None = None,
):
    """Run every scenario with common random numbers, reusing forecasts where the history
    and forecast settings agree; with ``scheduler``, each scenario runs on a dask worker
    (the forecast is then made on each worker, with the same result)."""
    scenarios = [load_scenario(file) for file in files]
    _check_alike(scenarios)
    paths = scenarios[0].paths if paths is None else paths
    seed = scenarios[0].seed if seed is None else seed
    histories = [load_history(scenario) for scenario in scenarios]  # bad input first
    if scheduler is not None:
        from planner.simulate.distributed import map_chunks

        arguments = [(scenario.source, paths, seed, engine) for scenario in scenarios]
        return tuple(map_chunks(scheduler, _run_one, arguments))
    forecasts: dict[tuple, object] = {}
    runs = []
    for number, (scenario, history) in enumerate(zip(scenarios, histories, strict=True), 1):
        step = None if progress is None else progress(f"{number}/{len(scenarios)}")
        known = forecasts.get(_forecast_key(scenario))
        run = run_scenario(
            scenario, paths, seed, step, known, engine or scenario.engine, jobs, None, history
        )
        forecasts.setdefault(_forecast_key(scenario), run.forecast)
        runs.append(run)
    return tuple(runs)


def paired_difference(a: np.ndarray, b: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Mean over paths of b - a (arrays paths x weeks) and its paired standard error."""
    return mean_se(b.astype(float) - a.astype(float))


def comparison_table(runs: tuple[RunResult, ...]) -> pd.DataFrame:
    """comparison.csv: per scenario and week, the measures and differences to the first."""
    base = runs[0].weekly
    base_table = weekly_table(base)
    frames = []
    for number, run in enumerate(runs):
        weekly = weekly_table(run.weekly)
        frame = pd.DataFrame({"scenario": run.scenario.name, "week_start": weekly["week_start"]})
        for measure, field in MEASURES.items():
            frame[measure] = weekly[measure]
            se = weekly[f"{measure}_se"]
            frame[f"{measure}_se"] = se
            diff, diff_se = paired_difference(getattr(base, field), getattr(run.weekly, field))
            independent = np.sqrt(se**2 + base_table[f"{measure}_se"] ** 2)
            frame[f"diff_{measure}"] = diff
            frame[f"diff_{measure}_se"] = diff_se
            frame[f"diff_{measure}_se_independent"] = independent if number else 0.0
        frames.append(frame)
    return pd.concat(frames, ignore_index=True)


def cost_table(runs: tuple[RunResult, ...]) -> pd.DataFrame | None:
    """Costs over the horizon per scenario, or None when no scenario gives costs."""
    if all(run.scenario.costs == type(run.scenario.costs)() for run in runs):
        return None
    rows = []
    base_affected = runs[0].weekly.patients_affected.sum(axis=1)
    for run in runs:
        costs, weekly = run.scenario.costs, run.weekly
        plan = costs.bed_day * weekly.bed_days.sum() + costs.nurse_shift * weekly.nurse_shifts.sum()
        affected = weekly.patients_affected.sum(axis=1)
        harm = (
            costs.diverted_patient * weekly.diverted.sum(axis=1).mean()
            + costs.waiting_hour * weekly.wait_hours.sum(axis=1).mean()
        )
        avoided, avoided_se = paired_difference(affected[:, None], base_affected[:, None])
        rows.append(
            {
                "scenario": run.scenario.name,
                "plan_cost": plan,
                "affected_patients_cost": harm,
                "total_cost": plan + harm,
                "expected_shortfalls": affected.mean(),
                "shortfalls_avoided": avoided[0],
                "shortfalls_avoided_se": avoided_se[0],
            }
        )
    table = pd.DataFrame(rows)
    extra = table["plan_cost"] - table["plan_cost"].iloc[0]
    avoided = table["shortfalls_avoided"].where(table["shortfalls_avoided"] > 0)
    table["incremental_plan_cost"] = extra
    table["incremental_cost_per_shortfall_avoided"] = extra / avoided
    return table


def compare_scenarios(
    files: list[Path], paths=None, seed=None, progress=None, engine=None, jobs=1, scheduler=None
) -> Comparison:
    """Run and compare scenarios (the first is the reference)."""
    if len(files) < 2:
        raise PlannerError("compare: give at least two scenario files")
    runs = run_all(files, paths, seed, progress, engine, jobs, scheduler)
    return Comparison(runs, comparison_table(runs), cost_table(runs))

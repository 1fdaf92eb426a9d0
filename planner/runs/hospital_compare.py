"""Comparing hospital plans path by path: other beds per ward, other outlying rules.

Every plan runs with the first plan's paths and seed on the first plan's histories and
forecasts, so path i of every plan sees the same admissions on every ward and the same random
numbers for each ward's arrival times and stays (each ward's inputs come from its own seed,
:mod:`planner.hospital.sampling`): a difference between plans comes from the plans. Plans that
move beds between wards or change the outlying rules therefore compare paired. Refused, with
the reason: plans whose wards differ (names or order), or whose ward's records or forecast
settings differ from the first plan's (they would not share the forecasts).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

from planner.errors import PlannerError
from planner.results import HospitalComparison, HospitalRun
from planner.runs.compare import _difference, _records_key
from planner.runs.hospital import load_histories, run_hospital
from planner.scenario_hospital import HospitalScenario, load_hospital
from planner.simulate.model import RunOptions
from planner.summaries.comparison import difference
from planner.summaries.monte_carlo import mean_se, share_se

#: Measures compared per week: column name -> (per-path weekly array of HospitalWeeks or a
#: function of it, True for a chance).
MEASURES = {
    "p_no_bed_anywhere": lambda w: w.no_bed > 0,
    "expected_no_bed": lambda w: w.no_bed,
    "p_diversion": lambda w: w.diverted > 0,
    "expected_outliers_placed": lambda w: w.placed.sum(axis=1),
    "expected_outlier_bed_days": lambda w: w.outlier_bed_days.sum(axis=1),
    "expected_cancelled_with_outliers": lambda w: w.cancelled_with_outliers.sum(axis=1),
}


def check_paired(plans: list[HospitalScenario]) -> None:
    """Refuse plans that cannot share the first plan's histories and forecasts."""
    first = plans[0]
    for plan in plans[1:]:
        if plan.names != first.names:
            raise PlannerError(
                f"{plan.source}: its wards ({', '.join(plan.names)}) are not those of "
                f"{first.source} ({', '.join(first.names)}) in the same order, so the plans "
                f"cannot be compared path by path"
            )
        if plan.horizon_weeks != first.horizon_weeks:
            raise PlannerError(f"{plan.source}: horizon_weeks differs from {first.source}")
        for name, base, ward in zip(first.names, first.scenarios, plan.scenarios, strict=True):
            same = _records_key(ward) == _records_key(base) and ward.forecast == base.forecast
            if not same or ward.start != base.start:
                why = _difference(base, ward) if not same else "starts on another day"
                raise PlannerError(
                    f"{plan.source}: ward {name} {why} from {first.source}, so the plans do "
                    f"not share their forecasts and cannot be compared path by path"
                )


def _per_path(run: HospitalRun) -> dict[str, np.ndarray]:
    return {name: measure(run.weeks) for name, measure in MEASURES.items()}


def comparison_table(runs: list[HospitalRun]) -> pd.DataFrame:
    """Per plan and week: each measure (± SE) and its paired difference to the first plan."""
    base = _per_path(runs[0])
    frames = []
    for run in runs:
        values = _per_path(run)
        frame = pd.DataFrame({"scenario": run.scenario.name, "week_start": run.table["week_start"]})
        for name, array in values.items():
            value, se = share_se(array) if array.dtype == bool else mean_se(array.astype(float))
            diff, diff_se = difference(base[name], array, True)
            frame[name], frame[f"{name}_se"] = value, se
            frame[f"diff_{name}"], frame[f"diff_{name}_se"] = diff, diff_se
        frames.append(frame)
    return pd.concat(frames, ignore_index=True)


def glance_table(runs: list[HospitalRun]) -> pd.DataFrame:
    """One row per plan over the whole horizon: the chance that some patient finds no bed
    anywhere and of a diversion (at least once), patients finding no bed, outliers and
    outlier bed-days (totals per path), each with the paired difference to the first."""

    def totals(run: HospitalRun) -> dict[str, np.ndarray]:
        weeks = run.weeks
        return {
            "p_no_bed_anywhere": (weeks.no_bed.sum(axis=1) > 0)[:, None],
            "p_diversion": (weeks.diverted.sum(axis=1) > 0)[:, None],
            "expected_no_bed": weeks.no_bed.sum(axis=1)[:, None],
            "expected_outliers_placed": weeks.placed.sum(axis=(1, 2))[:, None],
            "expected_outlier_bed_days": weeks.outlier_bed_days.sum(axis=(1, 2))[:, None],
        }

    base = totals(runs[0])
    rows = []
    for run in runs:
        row: dict[str, object] = {"scenario": run.scenario.name}
        for name, array in totals(run).items():
            value, se = share_se(array) if array.dtype == bool else mean_se(array.astype(float))
            diff, diff_se = difference(base[name], array, True)
            row[name], row[f"{name}_se"] = float(value[0]), float(se[0])
            row[f"diff_{name}"], row[f"diff_{name}_se"] = float(diff[0]), float(diff_se[0])
        rows.append(row)
    return pd.DataFrame(rows)


def compare_hospitals(paths: list[str | Path], options: RunOptions | None = None,
                      progress=None) -> HospitalComparison:  # fmt: skip
    """Run every hospital plan of ``paths`` (the first is the reference) paired."""
    plans = [load_hospital(path) for path in paths]
    check_paired(plans)
    first = plans[0]
    options = (options or RunOptions()).with_defaults(first.paths, first.seed, first.engine)
    histories = load_histories(first)
    runs = [run_hospital(first, _with_progress(options, progress, first.name), histories=histories)]
    joint = _joint(runs[0])
    for plan in plans[1:]:
        plan_options = _with_progress(options, progress, plan.name)
        runs.append(run_hospital(plan, plan_options, histories=histories, joint=joint))
    return HospitalComparison(tuple(runs), comparison_table(runs), glance_table(runs))


def _with_progress(options: RunOptions, progress, label: str) -> RunOptions:
    from dataclasses import replace

    return options if progress is None else replace(options, progress=progress(label))


def _joint(run: HospitalRun):
    from planner.forecast.joint import JointForecast

    return JointForecast(tuple(ward.forecast for ward in run.wards), run.forecast_note)

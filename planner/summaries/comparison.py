"""Plans side by side: per-week measures with differences to the first plan, and costs.

Plans that share their history and forecast are run on the same forecast paths with the same
random numbers for arrival times and stays (common random numbers), so a difference between
plans is computed path by path, and its standard error is the standard deviation of the
paired differences over sqrt(n), across the n paths (Source: Law, Simulation Modeling and
Analysis, 5th ed., section 11.2, common random numbers and the paired-t interval). For
contrast comparison.csv also gives the standard error two independent runs would have,
sqrt(se_a^2 + se_b^2). Plans compared as independent runs (``paired=False``: different wards,
histories or forecast settings, each run with its own seed) get that unpaired standard error
for every difference.

Costs over the horizon (units of the scenario's ``[costs]``): plan cost = bed-days open x
``bed_day`` + rostered nurse shifts x ``nurse_shift``; cost of affected patients = expected
diverted patients x ``diverted_patient`` + expected waiting hours x ``waiting_hour``; cost of
short shifts = expected shifts short of nurses x ``short_shift``. A shortfall is one patient
who found no free bed (waited or diverted); the incremental cost per shortfall (or per short
shift) avoided is the change in plan cost divided by the shortfalls (short shifts) avoided.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from planner.schema import default
from planner.summaries.monte_carlo import mean_se, paired_difference, share_se
from planner.summaries.weekly import WeeklyPaths, any_shortfall, outlook

#: comparison.csv's measures: column -> the WeeklyPaths field it is the mean of.
MEASURES = {
    "p_bed_shortfall": "bed_shortfall",
    "p_staff_shortfall": "staff_shortfall",
    "expected_patients_affected": "patients_affected",
    "expected_short_shifts": "short_shifts",
}


@dataclass(frozen=True)
class Costs:
    """Unit costs (any one currency): per open bed-day, per rostered nurse shift, per
    diverted patient, per patient-hour spent waiting for a bed, per shift short of nurses."""

    bed_day: float = default("costs.bed_day")
    nurse_shift: float = default("costs.nurse_shift")
    diverted_patient: float = default("costs.diverted_patient")
    waiting_hour: float = default("costs.waiting_hour")
    short_shift: float = default("costs.short_shift")


@dataclass(frozen=True)
class PlanPaths:
    """One plan of a comparison: its name, unit costs, weekly measures per path and its
    weekly table (:func:`planner.summaries.weekly.weekly_table` of them)."""

    name: str
    costs: Costs
    weekly: WeeklyPaths
    table: pd.DataFrame


def difference(base: np.ndarray, plan: np.ndarray, paired: bool) -> tuple[np.ndarray, np.ndarray]:
    """Mean of ``plan`` minus mean of ``base`` (arrays paths x columns) and its standard error:
    of the path-by-path differences when ``paired``, else sqrt(se_a^2 + se_b^2) of two
    independent means."""
    if paired:
        return paired_difference(base, plan)
    (mean_a, se_a), (mean_b, se_b) = _estimate(base), _estimate(plan)
    return mean_b - mean_a, np.sqrt(se_a**2 + se_b**2)


def _estimate(values: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Per column, the share of paths (a True/False measure) or the mean, with its error, as
    in weekly.csv."""
    return share_se(values) if values.dtype == bool else mean_se(values.astype(float))


def _pairing(paired: bool) -> str:
    return "paired" if paired else "independent"


def comparison_table(plans: list[PlanPaths], paired: bool = True) -> pd.DataFrame:
    """comparison.csv: per plan and week, the measures and differences to the first."""
    base = plans[0].weekly
    frames = []
    for number, plan in enumerate(plans):
        frame = pd.DataFrame({"scenario": plan.name, "week_start": plan.table["week_start"]})
        frame["pairing"] = _pairing(paired)
        for measure, field in MEASURES.items():
            values, base_values = getattr(plan.weekly, field), getattr(base, field)
            value, se = _estimate(values)
            frame[measure], frame[f"{measure}_se"] = value, se
            diff, diff_se = difference(base_values, values, paired or not number)
            independent = np.sqrt(se**2 + _estimate(base_values)[1] ** 2)
            frame[f"diff_{measure}"] = diff
            frame[f"diff_{measure}_se"] = diff_se
            frame[f"diff_{measure}_se_independent"] = independent if number else 0.0
        frames.append(frame)
    return pd.concat(frames, ignore_index=True)


def _totals(weekly: WeeklyPaths) -> dict[str, np.ndarray]:
    """Per path totals over the horizon, as (paths, 1) arrays."""
    return {
        "shortfalls": weekly.patients_affected.sum(axis=1)[:, None],
        "short_shifts": weekly.short_shifts.sum(axis=1)[:, None],
    }


def cost_table(plans: list[PlanPaths], paired: bool = True) -> pd.DataFrame | None:
    """Costs over the horizon per plan, or None when no plan gives costs."""
    if all(plan.costs == type(plan.costs)() for plan in plans):
        return None
    rows = []
    base = _totals(plans[0].weekly)
    for number, plan in enumerate(plans):
        costs, weekly = plan.costs, plan.weekly
        totals = _totals(weekly)
        cost = costs.bed_day * weekly.bed_days.sum() + costs.nurse_shift * weekly.nurse_shifts.sum()
        harm = (
            costs.diverted_patient * weekly.diverted.sum(axis=1).mean()
            + costs.waiting_hour * weekly.wait_hours.sum(axis=1).mean()
        )
        short_cost = costs.short_shift * totals["short_shifts"].mean()
        row = {"scenario": plan.name, "pairing": _pairing(paired), "plan_cost": cost,
               "affected_patients_cost": harm, "short_shifts_cost": short_cost,
               "total_cost": cost + harm + short_cost}  # fmt: skip
        for name in ("shortfalls", "short_shifts"):
            avoided, avoided_se = difference(totals[name], base[name], paired or not number)
            row[f"expected_{name}"] = totals[name].mean()
            row[f"{name}_avoided"], row[f"{name}_avoided_se"] = avoided[0], avoided_se[0]
        rows.append(row)
    table = pd.DataFrame(rows)
    extra = table["plan_cost"] - table["plan_cost"].iloc[0]
    table["incremental_plan_cost"] = extra
    for name, per in (("shortfalls", "shortfall"), ("short_shifts", "short_shift")):
        avoided = table[f"{name}_avoided"].where(table[f"{name}_avoided"] > 0)
        table[f"incremental_cost_per_{per}_avoided"] = extra / avoided
    return table


def glance_table(plans: list[PlanPaths], paired: bool = True) -> pd.DataFrame:
    """One row per plan: chance of any bed shortfall in the first weeks and over the
    horizon, expected patients affected and short shifts over the horizon, with their
    differences to the first plan."""
    base = _totals(plans[0].weekly)
    rows = []
    for number, plan in enumerate(plans):
        weekly = plan.weekly
        first = outlook(weekly)
        pair = paired or not number  # the first plan against itself: 0 with error 0
        weeks, early, early_se = first.weeks, first.p_bed_shortfall, first.p_bed_shortfall_se
        whole, _ = any_shortfall(weekly, weekly.bed_shortfall.shape[1])
        totals = _totals(weekly)
        change, change_se = difference(base["shortfalls"], totals["shortfalls"], pair)
        shifts, shifts_se = difference(base["short_shifts"], totals["short_shifts"], pair)
        rows.append(
            {
                "scenario": plan.name,
                "pairing": _pairing(paired),
                f"p_bed_shortfall_first_{weeks}_weeks": early,
                "se": early_se,
                "p_bed_shortfall_any_week": whole,
                "expected_patients_affected": totals["shortfalls"].mean(),
                "change_vs_first": change[0],
                "change_se": change_se[0],
                "p_staff_shortfall_any_week": weekly.staff_shortfall.any(axis=1).mean(),
                "expected_short_shifts": totals["short_shifts"].mean(),
                "short_shifts_change_vs_first": shifts[0],
                "short_shifts_change_se": shifts_se[0],
            }
        )
    return pd.DataFrame(rows)

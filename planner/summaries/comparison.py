"""Plans side by side: per-week measures with paired differences to the first plan, and costs.

Every plan is run on the same forecast paths with the same stays (common random numbers), so
a difference between plans is computed path by path, and its standard error is the standard
deviation of the paired differences over sqrt(n) (Source: Law, Simulation Modeling and
Analysis, 5th ed., section 11.2, common random numbers and the paired-t interval). For contrast
the table also gives the standard error two independent runs would have, sqrt(se_a^2 + se_b^2).

Costs over the horizon (units of the scenario's ``[costs]``): plan cost = bed-days open x
``bed_day`` + rostered nurse shifts x ``nurse_shift``; cost of affected patients = expected
diverted patients x ``diverted_patient`` + expected waiting hours x ``waiting_hour``. A
shortfall is one patient who found no free bed (waited or diverted); the incremental cost per
shortfall avoided is the change in plan cost divided by the shortfalls avoided.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from planner.schema import default
from planner.summaries.monte_carlo import paired_difference
from planner.summaries.weekly import WeeklyPaths, any_shortfall, outlook

MEASURES = {
    "p_bed_shortfall": "bed_shortfall",
    "p_staff_shortfall": "staff_shortfall",
    "expected_patients_affected": "patients_affected",
}


@dataclass(frozen=True)
class Costs:
    """Unit costs (any one currency): per open bed-day, per rostered nurse shift, per
    diverted patient, per patient-hour spent waiting for a bed."""

    bed_day: float = default("costs.bed_day")
    nurse_shift: float = default("costs.nurse_shift")
    diverted_patient: float = default("costs.diverted_patient")
    waiting_hour: float = default("costs.waiting_hour")


@dataclass(frozen=True)
class PlanPaths:
    """One plan of a comparison: its name, unit costs, weekly measures per path and its
    weekly table (:func:`planner.summaries.weekly.weekly_table` of them)."""

    name: str
    costs: Costs
    weekly: WeeklyPaths
    table: pd.DataFrame


def comparison_table(plans: list[PlanPaths]) -> pd.DataFrame:
    """comparison.csv: per plan and week, the measures and differences to the first."""
    base, base_table = plans[0].weekly, plans[0].table
    frames = []
    for number, plan in enumerate(plans):
        weekly = plan.table
        frame = pd.DataFrame({"scenario": plan.name, "week_start": weekly["week_start"]})
        for measure, field in MEASURES.items():
            frame[measure] = weekly[measure]
            se = weekly[f"{measure}_se"]
            frame[f"{measure}_se"] = se
            diff, diff_se = paired_difference(getattr(base, field), getattr(plan.weekly, field))
            independent = np.sqrt(se**2 + base_table[f"{measure}_se"] ** 2)
            frame[f"diff_{measure}"] = diff
            frame[f"diff_{measure}_se"] = diff_se
            frame[f"diff_{measure}_se_independent"] = independent if number else 0.0
        frames.append(frame)
    return pd.concat(frames, ignore_index=True)


def cost_table(plans: list[PlanPaths]) -> pd.DataFrame | None:
    """Costs over the horizon per plan, or None when no plan gives costs."""
    if all(plan.costs == type(plan.costs)() for plan in plans):
        return None
    rows = []
    base_affected = plans[0].weekly.patients_affected.sum(axis=1)
    for plan in plans:
        costs, weekly = plan.costs, plan.weekly
        bed_cost = costs.bed_day * weekly.bed_days.sum()
        cost = bed_cost + costs.nurse_shift * weekly.nurse_shifts.sum()
        affected = weekly.patients_affected.sum(axis=1)
        harm = (
            costs.diverted_patient * weekly.diverted.sum(axis=1).mean()
            + costs.waiting_hour * weekly.wait_hours.sum(axis=1).mean()
        )
        avoided, avoided_se = paired_difference(affected[:, None], base_affected[:, None])
        rows.append(
            {
                "scenario": plan.name,
                "plan_cost": cost,
                "affected_patients_cost": harm,
                "total_cost": cost + harm,
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


def glance_table(plans: list[PlanPaths]) -> pd.DataFrame:
    """One row per plan: chance of any bed shortfall in the first weeks and over the
    horizon, and expected patients affected over the horizon, with the paired difference."""
    base_affected = plans[0].weekly.patients_affected.sum(axis=1)[:, None]
    rows = []
    for plan in plans:
        weekly = plan.weekly
        first = outlook(weekly)
        weeks, early, early_se = first.weeks, first.p_bed_shortfall, first.p_bed_shortfall_se
        whole, _ = any_shortfall(weekly, weekly.bed_shortfall.shape[1])
        affected = weekly.patients_affected.sum(axis=1)
        change, change_se = paired_difference(base_affected, affected[:, None])
        rows.append(
            {
                "scenario": plan.name,
                f"p_bed_shortfall_first_{weeks}_weeks": early,
                "se": early_se,
                "p_bed_shortfall_any_week": whole,
                "expected_patients_affected": affected.mean(),
                "change_vs_first": change[0],
                "change_se": change_se[0],
                "p_staff_shortfall_any_week": weekly.staff_shortfall.any(axis=1).mean(),
                "expected_short_shifts": weekly.short_shifts.sum(axis=1).mean(),
            }
        )
    return pd.DataFrame(rows)

"""Risk measures for sizing a ward, week by week with Monte Carlo errors, and the tables of a
bed search: the beds each week needs, the answer for every week, and the classical sizes.

Measures (``[sizing] measure``), each per forecast week and per path, then across paths:

* ``no_bed_week``: the chance that at least one patient finds no free bed in the week (the
  run report's headline measure); a share of paths, error sqrt(p (1 - p) / n);
* ``no_bed_share``: the share of the week's patients who find no free bed (waited or were
  placed elsewhere), comparable with the Erlang loss formula; the events of all paths pooled,
  sum of patients turned away / sum of patients admitted, with the error of a ratio of means
  across the independent paths (:func:`planner.summaries.monte_carlo.ratio_se`);
* ``wait_hours``: the expected hours waited for a bed by the week's patients (policy "wait");
  a mean over paths, error sd / sqrt(n);
* ``cancelled_week``: the chance that at least one planned patient is cancelled for want of a
  bed in the week (a planned stream with ``when_full = "cancel"``); a share of paths.

A bed count meets the target in a week when the estimate is at or under it; the beds a week
needs are the fewest that meet it; the ward needs the most that any week needs.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from datetime import date

import numpy as np
import pandas as pd

from planner.errors import PlannerError
from planner.schema import choices
from planner.simulate.queueing import OCCUPANCY_RULE, erlang_loss_beds, occupancy_rule_beds
from planner.simulate.result import WardResult
from planner.summaries.monte_carlo import mean_se, ratio_se, share_se
from planner.summaries.weekly import weekly_paths

MEASURES = choices("sizing.measure")
#: The target when the scenario and the command line give none.
DEFAULT_TARGETS = {"no_bed_week": 0.05, "no_bed_share": 0.05, "wait_hours": 24.0,
                   "cancelled_week": 0.05}  # fmt: skip
#: Each measure in words: ``phrase`` for sentences, ``axis`` for a chart (two lines) and
#: ``unit`` for table headers.
MEASURE_WORDS = {
    "no_bed_week": {
        "phrase": "the weekly chance of a patient finding no free bed",
        "axis": "chance of a patient finding no free\nbed in the week (share of paths, 0-1)",
        "unit": "% of paths, in the week",
    },
    "no_bed_share": {
        "phrase": "the share of patients finding no free bed",
        "axis": "share of the week's patients finding\nno free bed (0-1)",
        "unit": "% of the week's patients",
    },
    "wait_hours": {
        "phrase": "the expected hours waited for a bed",
        "axis": "hours waited for a bed (all patients\ntogether, per week, mean over paths)",
        "unit": "hours, all patients together, per week",
    },
    "cancelled_week": {
        "phrase": "the weekly chance of a planned patient being cancelled",
        "axis": "chance of a planned patient being cancelled\nin the week (share of paths, 0-1)",
        "unit": "% of paths, in the week",
    },
}
#: Share of patients the Erlang loss size aims at when the measure is in hours.
ERLANG_DEFAULT_SHARE = 0.05


@dataclass(frozen=True)
class SizingTarget:
    """What the ward should stay under: ``measure`` (one of :data:`MEASURES`) at or under
    ``target`` in every forecast week (a chance or share, or hours for wait_hours);
    ``shift_target``: the largest chance that a shift is short of nurses; ``defaults``: the
    names of the values that were not given (so a page can say which are defaults)."""

    measure: str = "no_bed_week"
    target: float = DEFAULT_TARGETS["no_bed_week"]
    shift_target: float = 0.05
    defaults: tuple[str, ...] = ()

    @property
    def is_share(self) -> bool:
        return self.measure != "wait_hours"

    def target_text(self) -> str:
        """The target as a reader says it: "5%" or "24 hours"."""
        return f"{self.target * 100:.3g}%" if self.is_share else f"{self.target:.3g} hours"

    def defaults_text(self) -> str:
        """The values taken by default, e.g. "measure no_bed_week, target 5%"; "" if none."""
        values = {"measure": self.measure, "target": self.target_text(),
                  "shift_target": f"{self.shift_target * 100:.3g}%"}  # fmt: skip
        return ", ".join(f"{name} {values[name]}" for name in self.defaults)

    def describe(self) -> str:
        """The measure and target in words, e.g. "the weekly chance of a patient finding no
        free bed under 5%"."""
        what = MEASURE_WORDS[self.measure]["phrase"]
        return f"{what} at or under {self.target_text()}"

    @property
    def erlang_share(self) -> float:
        """The share of patients the Erlang loss size aims at: the target for the chance and
        share measures, :data:`ERLANG_DEFAULT_SHARE` for hours."""
        return self.target if self.is_share else ERLANG_DEFAULT_SHARE


def sizing_target(values: Mapping[str, object], where: str) -> SizingTarget:
    """A :class:`SizingTarget` from the ``[sizing]`` keys given (``measure``, ``target``,
    ``shift_target``; missing or None for the default); ``where`` names the scenario file or
    the option in messages."""
    given = {name: value for name, value in values.items() if value is not None}
    measure = str(given.get("measure", "no_bed_week"))
    if measure not in MEASURES:
        raise PlannerError(f"{where}: sizing.measure: must be one of {', '.join(MEASURES)}, "
                           f"got {measure!r}")  # fmt: skip
    target = float(given.get("target", DEFAULT_TARGETS[measure]))
    shift_target = float(given.get("shift_target", 0.05))
    for name, value, share in (("target", target, measure != "wait_hours"),
                               ("shift_target", shift_target, True)):  # fmt: skip
        if not np.isfinite(value) or value <= 0 or (share and value >= 1):
            limit = "a share above 0 and below 1" if share else "hours above 0"
            raise PlannerError(f"{where}: sizing.{name}: must be {limit}, got {value!r}")
    missing = tuple(name for name in ("measure", "target", "shift_target") if name not in given)
    return SizingTarget(measure, target, shift_target, missing)


def requested_target(plan, given: Mapping[str, object], prefix: str = "") -> SizingTarget:
    """The ``plan``'s (a scenario's) [sizing] values with the ``given`` ones (measure, target,
    shift_target; None for not given) on top; a target the scenario sets for another measure
    than the one asked for is not carried over. Messages name the plan's file and the given
    values (``prefix`` before each name: "--" for command-line options)."""
    values = dict(plan.resolved.get("sizing", {}))
    measure = given.get("measure")
    if measure is not None and measure != values.get("measure", "no_bed_week"):
        values.pop("target", None)
    values |= {name: value for name, value in given.items() if value is not None}
    named = [f"{prefix}{name.replace('_', '-') if prefix else name}"
             for name, value in given.items() if value is not None]  # fmt: skip
    where = f"{plan.source}" + (f" with {', '.join(named)}" if named else "")
    return sizing_target(values, where)


def weekly_risk(
    ward: WardResult, start: date | pd.Timestamp, measure: str
) -> tuple[np.ndarray, np.ndarray]:
    """The ``measure`` in each forecast week from ``start`` and its Monte Carlo standard
    error, (weeks,) arrays each."""
    weekly = weekly_paths(ward, start, planned=measure == "cancelled_week")
    if measure == "cancelled_week":
        return share_se(weekly.cancelled > 0)
    if measure == "no_bed_week":
        return share_se(weekly.bed_shortfall)
    if measure == "no_bed_share":
        return ratio_se(weekly.patients_affected, weekly.admissions)
    if measure == "wait_hours":
        return mean_se(weekly.wait_hours)
    raise PlannerError(f"sizing.measure: must be one of {', '.join(MEASURES)}, got {measure!r}")


@dataclass(frozen=True)
class ClassicalSizes:
    """Sizes from stationary formulas at a mean load: ``admissions_per_day`` (forecast mean),
    ``mean_stay_days``, ``load`` (their product, erlangs = mean census with unlimited beds),
    ``occupancy_beds`` (beds for :data:`OCCUPANCY_RULE` mean occupancy), ``erlang_beds``
    (fewest beds with Erlang B at or under ``erlang_share``)."""

    admissions_per_day: float
    mean_stay_days: float
    load: float
    occupancy_beds: int
    erlang_beds: int
    erlang_share: float


def classical_sizes(admissions_per_day: float, mean_stay_days: float, share: float):
    """The :class:`ClassicalSizes` of a ward with this mean arrival rate and mean stay."""
    load = float(admissions_per_day) * float(mean_stay_days)
    return ClassicalSizes(float(admissions_per_day), float(mean_stay_days), load,
                          occupancy_rule_beds(load, OCCUPANCY_RULE),
                          erlang_loss_beds(load, share), share)  # fmt: skip


def beds_needed(
    candidates: Mapping[int, tuple[np.ndarray, np.ndarray]], target: float
) -> np.ndarray:
    """Per week, the fewest beds among ``candidates`` (beds -> (risk, se) per week) whose risk
    is at or under ``target`` and whose one bed fewer was also tried and is over it (the
    search makes sure of this); -1 where no candidate meets the target."""
    beds = sorted(candidates)
    meets = np.array([candidates[b][0] <= target for b in beds])
    first = np.argmax(meets, axis=0)
    return np.where(meets.any(axis=0), np.asarray(beds)[first], -1)


def candidates_table(
    candidates: Mapping[int, tuple[np.ndarray, np.ndarray]], week_start: pd.DatetimeIndex
) -> pd.DataFrame:
    """Every candidate tried, one row per beds and week: beds, week_start, risk, risk_se."""
    beds = sorted(candidates)
    weeks = len(week_start)
    return pd.DataFrame(
        {
            "beds": np.repeat(beds, weeks),
            "week_start": np.tile(week_start.strftime("%Y-%m-%d"), len(beds)),
            "risk": np.concatenate([candidates[b][0] for b in beds]),
            "risk_se": np.concatenate([candidates[b][1] for b in beds]),
        }
    )


def _near(candidates, beds: int, target: float) -> bool:
    """Whether a different seed could move the answer ``beds`` by one: some week's risk at
    ``beds`` is within one standard error under the target, or every week over the target
    at one bed fewer is within one standard error over it."""
    risk, se = candidates[beds]
    up = bool(np.any(target - risk <= se))
    if beds - 1 not in candidates:
        return up
    fewer, fewer_se = candidates[beds - 1]
    over = fewer > target
    return up or bool(over.any() and np.all(fewer[over] - target <= fewer_se[over]))


def _row(candidates, beds: int, weeks, target: float) -> dict[str, object]:
    """Risk (worst of ``weeks``) and its error at ``beds`` and one bed fewer."""
    row: dict[str, object] = {"beds_needed": beds}
    for name, count in (("risk", beds), ("risk_one_fewer", beds - 1)):
        risk, se = candidates.get(count, (np.full(len(weeks), np.nan),) * 2)
        worst = int(np.nanargmax(risk[weeks])) if np.isfinite(risk[weeks]).any() else 0
        row[name], row[f"{name}_se"] = risk[weeks][worst], se[weeks][worst]
    sub = {b: (risk[weeks], se[weeks]) for b, (risk, se) in candidates.items()}
    row["within_one_se"] = _near(sub, beds, target)
    return row


def sizing_table(
    candidates: Mapping[int, tuple[np.ndarray, np.ndarray]],
    week_start: pd.DatetimeIndex,
    target: SizingTarget,
    current_beds: int,
    classical: list[ClassicalSizes],
    overall: ClassicalSizes,
) -> pd.DataFrame:
    """sizing.csv: one row per forecast week (the beds that week needs) and a last row
    "overall" (the beds every week's target needs, its worst week's risk; the classical sizes
    at the horizon's mean load). Columns documented in the README."""
    needed = beds_needed(candidates, target.target)
    if np.any(needed < 0):
        raise PlannerError("sizing: the search ended without a bed count meeting the target")
    rows = []
    periods = [(f"week {w + 1}", [w], week_start[w], classical[w]) for w in range(len(needed))]
    periods.append(("overall", list(range(len(needed))), None, overall))
    for period, weeks, first, sizes in periods:
        beds = int(needed[weeks].max())
        now_risk, now_se = candidates[current_beds]
        worst = weeks[int(np.argmax(now_risk[weeks]))]
        rows.append({
            "period": period,
            "week_start": "" if first is None else first.strftime("%Y-%m-%d"),
            "measure": target.measure,
            "target": target.target,
            **_row(candidates, beds, weeks, target.target),
            "beds_now": current_beds,
            "risk_now": now_risk[worst],
            "risk_now_se": now_se[worst],
            "admissions_per_day": sizes.admissions_per_day,
            "mean_stay_days": sizes.mean_stay_days,
            "offered_load": sizes.load,
            "occupancy_85_beds": sizes.occupancy_beds,
            "erlang_beds": sizes.erlang_beds,
            "erlang_share": sizes.erlang_share,
        })  # fmt: skip
    return pd.DataFrame(rows)

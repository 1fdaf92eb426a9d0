"""Sizing a ward: the fewest beds that keep a risk at or under a target in every forecast week,
found by simulating candidate bed counts on common random numbers, beside the classical
sizes; and the nurse roster at that size.

Common random numbers. Every candidate is simulated on the same forecast paths with the same
seed. :meth:`WardModel.with_settings` changes only the base beds (dated changes are kept on
top), and the engines draw each path's inputs (arrival times, stays, remaining stays of the
patients on the ward) from the path's own streams, which do not depend on the beds
(:mod:`planner.simulate.sampling`): patient k of path i arrives at the same moment with the
same stay in every candidate.

Why the risk cannot rise with beds, path by path (so bisection finds exactly the count that
trying every one would). Compare a ward with b(t) beds open with one with b(t) + 1, on the
same patients:

* policy "divert": the patients in beds with one bed more always include those with one bed
  fewer, plus at most one other. True at the start (the same patients); a discharge removes a
  patient from both wards or only from the larger one; an arrival taken by the smaller ward
  (fewer than b(t) in beds) finds at most b(t) in the larger one and is taken there too; one
  turned away by the smaller ward but taken by the larger one finds the two wards holding the
  same patients (at least b(t) in the smaller, at most b(t) in the larger), and afterwards
  the larger holds exactly one more. So a patient turned away with one bed more is turned
  away with one bed fewer too.
* policy "wait" (first come, first served): patient k gets a bed at the first moment, not
  before the arrival or the previous patient's bed, when fewer patients are in beds than are
  open. If every earlier patient got a bed no later in the larger ward, each also left no
  later (same stays), so at patient k's moment in the smaller ward the larger one holds no
  more patients among those before k, and has a bed more: patient k gets a bed no later.
  Each patient waits no longer, and nobody waits with one bed more who did not wait anyway.

By induction the same holds for any number of extra beds, so on the same random numbers the
weekly chance of a patient finding no free bed, the share of patients finding none and the
hours waited never increase with beds (tests/test_sizing.py checks this path by path).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import replace

import numpy as np
import pandas as pd

from planner.errors import PlannerError
from planner.records.ward_history import WardHistory
from planner.results import SizingResult
from planner.runs.run import Streams, forecast_step, load_history, simulate_step, ward_model
from planner.scenario import Scenario
from planner.simulate.model import RunOptions, WardModel, beds_open_by_day
from planner.summaries.roster import roster_needed
from planner.summaries.sizing import (
    SizingTarget,
    beds_needed,
    candidates_table,
    classical_sizes,
    sizing_table,
    weekly_risk,
)

#: Most bed counts simulated around the answer for the chart of risk against beds.
CHART_CANDIDATES = 24

Risk = tuple[np.ndarray, np.ndarray]


def search_beds(
    risk_at: Callable[[int], Risk], target: float, first: int, floor: int, ceiling: int
) -> dict[int, Risk]:
    """Every bed count tried while finding, for each week, the fewest beds in [``floor``,
    ``ceiling``] whose risk (``risk_at(beds)``: risk and error per week, never rising with
    beds) is at or under ``target``. Starts at ``first``, doubles its steps upwards until every
    week meets the target, then bisects the widest open bracket of any week until each week's
    answer b has b - 1 tried and over the target (or b = ``floor``)."""
    tried: dict[int, Risk] = {}
    step = max(2, first // 8)
    beds = min(max(first, floor), ceiling)
    while True:
        if beds not in tried:
            tried[beds] = risk_at(beds)
        counts = np.array(sorted(tried))
        meets = np.array([tried[b][0] <= target for b in counts])
        high = np.where(meets.any(axis=0), counts[np.argmax(meets, axis=0)], ceiling + 1)
        fails = np.where(~meets, counts[:, None], floor - 1).max(axis=0)
        if np.any(high > ceiling):
            if counts[-1] >= ceiling:
                raise PlannerError(f"sizing: even {ceiling} beds do not meet the target")
            beds, step = min(int(counts[-1]) + step, ceiling), step * 2
        elif np.all(high - fails <= 1):
            return tried
        else:
            widest = int(np.argmax(high - fails))
            beds = int((high[widest] + fails[widest]) // 2)


def bed_limits(model: WardModel, arrivals: np.ndarray) -> tuple[int, int]:
    """The fewest base beds that keep every day's beds open at 0 or more (at least 1), and
    base beds enough for every patient of every path to find a free bed on arrival."""
    days = arrivals.shape[1]
    large = 10**6
    offsets = beds_open_by_day(replace(model.settings, beds=large), model.start, days) - large
    floor = max(1, -int(offsets.min()))
    most = model.inpatients_elapsed.size + int(arrivals.sum(axis=1).max(initial=0))
    return floor, max(floor, most - int(offsets.min()))


#: Most new patients whose random inputs a search draws once and keeps for every bed count;
#: above it each bed count is simulated as a run is (inputs drawn block by block).
KEPT_PATIENTS = 4_000_000


def bed_simulator(model: WardModel, arrivals: np.ndarray, options: RunOptions):
    """``simulate(beds)``: the ward result of ``model`` with ``beds`` base beds on
    ``arrivals`` with the seed of ``options`` (common random numbers). The random inputs do
    not depend on the beds, so when they are few enough (:data:`KEPT_PATIENTS`) they are drawn
    once and every bed count runs on them in this process, with the engine ``options``
    chooses; the numbers are those of :func:`planner.runs.run.simulate_step` either way."""
    if arrivals.sum() > KEPT_PATIENTS or options.scheduler is not None:

        def simulate_each(beds: int):
            settings = replace(model.settings, beds=int(beds))
            return simulate_step(model.with_settings(settings), arrivals, options)

        return simulate_each
    from planner.simulate import fast, ward
    from planner.simulate.engines import chosen_engine
    from planner.simulate.sampling import draw_inputs

    engine = fast if chosen_engine(options.engine or "auto") == "fast" else ward
    seed = Streams.from_seed(options.seed).ward
    inputs = draw_inputs(model, np.asarray(arrivals, dtype=np.int64), seed)

    def simulate(beds: int):
        settings = replace(model.settings, beds=int(beds))
        return engine.simulate_drawn(inputs, model.with_settings(settings), arrivals.shape[1])

    return simulate


def risk_function(simulate, start, measure):
    """``risk_at(beds)``: ``measure`` in each week from ``start``, with its standard error,
    of the ward ``simulate(beds)`` gives (:func:`bed_simulator`)."""

    def risk_at(beds: int) -> Risk:
        return weekly_risk(simulate(beds), start, measure)

    return risk_at


def beds_search(
    model: WardModel, arrivals: np.ndarray, start, target: SizingTarget, simulate
) -> dict[int, Risk]:
    """Every bed count simulated (risk and error per week from ``start``) while finding the
    beds each week needs, starting from the model's beds (:func:`search_beds`); ``simulate``
    from :func:`bed_simulator`."""
    risk_at = risk_function(simulate, start, target.measure)
    floor, ceiling = bed_limits(model, arrivals)
    current = int(model.settings.beds)
    tried = {current: risk_at(current)}
    tried |= search_beds(
        lambda beds: tried[beds] if beds in tried else risk_at(beds),
        target.target,
        current,
        floor,
        ceiling,
    )
    return tried


def _chart_counts(tried, answer: int, others: list[int], floor: int) -> list[int]:
    """Bed counts around the answer, the current beds and the classical sizes for the chart."""
    low = max(floor, min(answer, *others) - 1)
    high = max(answer, *others) + 2
    every = max(1, -(-(high - low + 1) // CHART_CANDIDATES))
    return [b for b in range(low, high + 1, every) if b not in tried]


def check_measure(scenario: Scenario, target: SizingTarget) -> None:
    """Refuse hours waited as the measure of a ward whose patients never wait, and
    cancellations as the measure of a ward that cancels nobody."""
    planned = scenario.planned
    if target.measure == "cancelled_week" and not (planned.given and planned.when_full == "cancel"):
        raise PlannerError(
            f"{scenario.source}: sizing.measure: cancelled_week needs a [planned] stream with "
            f'when_full = "cancel"; choose no_bed_week, no_bed_share or wait_hours'
        )
    if target.measure == "wait_hours" and scenario.ward.policy != "wait":
        raise PlannerError(
            f'{scenario.source}: sizing.measure: wait_hours needs beds.policy = "wait" '
            f"(with {scenario.ward.policy!r} nobody waits); choose no_bed_week or no_bed_share"
        )


def size_scenario(
    scenario: Scenario,
    target: SizingTarget,
    options: RunOptions | None = None,
    *,
    history: WardHistory | None = None,
    forecast=None,
    model: WardModel | None = None,
) -> SizingResult:
    """The :class:`SizingResult` of ``scenario`` for ``target``: ``history``, ``forecast``
    and ``model`` as for :func:`planner.runs.run.run_scenario` (reused when given)."""
    options = (options or RunOptions()).with_defaults(
        scenario.paths, scenario.seed, scenario.engine
    )
    check_measure(scenario, target)
    history = load_history(scenario) if history is None else history
    if forecast is None:
        forecast = forecast_step(scenario, history, options.paths, options.seed)
    model = ward_model(scenario, history) if model is None else model
    model = model.with_settings(scenario.ward)
    arrivals = forecast.paths
    simulate = bed_simulator(model, arrivals, replace(options, progress=None))
    tried = beds_search(model, arrivals, history.start, target, simulate)
    risk_at = risk_function(simulate, history.start, target.measure)
    floor, ceiling = bed_limits(model, arrivals)
    current = int(scenario.ward.beds)
    answer = int(beds_needed(tried, target.target).max())
    daily = arrivals[:, history.gap_days :]
    weeks = daily.shape[1] // 7
    mean_stay = model.stays.mean
    per_week = [
        classical_sizes(daily[:, 7 * w : 7 * w + 7].mean(), mean_stay, target.erlang_share)
        for w in range(weeks)
    ]
    overall = classical_sizes(daily[:, : 7 * weeks].mean(), mean_stay, target.erlang_share)
    sizes = [overall.occupancy_beds, overall.erlang_beds, current]
    for beds in _chart_counts(tried, answer, [b for b in sizes if b <= ceiling], floor):
        if beds not in tried:
            tried[beds] = risk_at(beds)
    week_start = pd.date_range(history.start, periods=weeks, freq="7D")
    table = sizing_table(tried, week_start, target, current, per_week, overall)
    sized = simulate(answer)
    return SizingResult(
        scenario=scenario,
        target=target,
        start=history.start,
        current_beds=current,
        beds_needed=answer,
        near_target=bool(table["within_one_se"].iloc[-1]),
        table=table,
        candidates=candidates_table(tried, week_start),
        classical=overall,
        roster=roster_needed(
            sized, history.start, target.shift_target, model.settings.staffing.minimum_nurses
        ),
        roster_beds=answer,
        paths=options.paths,
        seed=options.seed,
    )

"""Beds per ward for a hospital risk target: the total needed, or the best split of a total.

The measure is the hospital's: the weekly chance that some patient finds no bed on the home
ward nor on any ward listed for its outlying (:mod:`planner.summaries.hospital`); the target
holds when that chance is at or under it in every forecast week. Every candidate split of
beds is simulated on the same forecast paths and the same random inputs (drawn once: they do
not depend on the beds), so two splits differ only by their beds.

The search is greedy, one bed at a time, judged by the expected number of patients left
without the bed they needed over the forecast: those finding no bed anywhere, and planned
patients cancelled (without them, a search would empty the wards that take outliers and
cancel their planned lists). It is a smooth measure that every bed changes, unlike a chance
that may not move for one bed:

- the total needed (no total given): from the scenario's beds, add the bed that lowers that
  number most until the target holds in every week, then take away, one at a time, the bed
  whose loss raises it least while the target still holds;
- a total given: from the scenario's beds, add (or take away) beds the same way until the
  total is reached, then move single beds from the ward that loses least to the ward that
  gains most while that saves at least :data:`LEAST_GAIN` patient (and more than twice the
  paired difference's standard error); the result says whether the target holds.

Greedy steps find a good split, not a proven best one (wards linked by outlying are not
independent); each step's candidates are listed in the result so a planner can see how close
the alternatives were. Only ``beds.base`` changes; dated bed changes stay as the scenario
gives them.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pandas as pd

from planner.errors import PlannerError
from planner.hospital.fast import simulate_drawn
from planner.hospital.model import HospitalModel
from planner.hospital.sampling import draw_hospital
from planner.results import HospitalSizing
from planner.runs.hospital import forecast_wards_step, load_histories
from planner.runs.run import Streams
from planner.runs.ward_model import ward_model
from planner.scenario_hospital import HospitalScenario
from planner.simulate.model import RunOptions
from planner.summaries.hospital import hospital_weeks
from planner.summaries.monte_carlo import share_se

#: Most single-bed steps a search takes before it gives up.
MOST_STEPS = 400
#: Least gain for moving a bed between wards: patients left without a bed over the forecast
#: (a judgement: moving a staffed bed for less is not worth the disruption).
LEAST_GAIN = 1.0


class _Evaluator:
    """Simulates splits of beds on inputs drawn once; remembers every split it has seen."""

    def __init__(self, model: HospitalModel, inputs, days: int, start) -> None:
        self.model, self.inputs, self.days, self.start = model, inputs, days, start
        self.seen: dict[tuple[int, ...], tuple[float, float, float]] = {}
        self.per_path: dict[tuple[int, ...], np.ndarray] = {}

    def __call__(self, beds: tuple[int, ...]) -> tuple[float, float, float]:
        """(highest weekly risk, its SE, expected patients finding no bed anywhere or
        cancelled over the forecast)."""
        if beds not in self.seen:
            wards = tuple(ward.with_settings(replace(ward.settings, beds=int(n)))
                          for ward, n in zip(self.model.wards, beds, strict=True))  # fmt: skip
            result = simulate_drawn(self.inputs, self.model.with_wards(wards), self.days)
            weeks = hospital_weeks(result, self.start)
            risk, se = share_se(weeks.no_bed > 0)
            worst = int(np.argmax(risk))
            skip = (pd.Timestamp(self.start) - pd.Timestamp(result.wards[0].start)).days
            cancelled = sum(ward.cancelled[:, skip:].sum(axis=1) for ward in result.wards)
            self.per_path[beds] = weeks.no_bed.sum(axis=1) + cancelled
            self.seen[beds] = (float(risk[worst]), float(se[worst]), self.per_path[beds].mean())
        return self.seen[beds]


def _changed(beds: tuple[int, ...], ward: int, by: int) -> tuple[int, ...]:
    return tuple(n + by if w == ward else n for w, n in enumerate(beds))


def _step(evaluate, beds, by: int, allowed) -> tuple[tuple[int, ...], int] | None:
    """The split one bed away (``by`` = +1 or -1) with the fewest patients left without a bed,
    among the wards ``allowed`` accepts, and its ward; None when there is none."""
    options = [(evaluate(_changed(beds, w, by))[2], w) for w in range(len(beds))
               if beds[w] + by >= 0 and allowed(_changed(beds, w, by))]  # fmt: skip
    if not options:
        return None
    _, ward = min(options)
    return _changed(beds, ward, by), ward


def size_hospital(
    scenario: HospitalScenario, target: float, total: int | None, options: RunOptions
) -> HospitalSizing:
    """Search beds per ward for ``target`` (module docstring); ``total``: beds to share, or
    None for the total needed."""
    if not 0 < target < 1:
        raise PlannerError(f"target: a chance between 0 and 1, got {target!r}")
    if total is not None and total < len(scenario.names):
        raise PlannerError(f"total: at least one bed per ward ({len(scenario.names)}), got {total}")
    options = options.with_defaults(scenario.paths, scenario.seed, scenario.engine)
    histories = load_histories(scenario)
    joint = forecast_wards_step(scenario, histories, options.paths, options.seed)
    pairs = zip(scenario.scenarios, histories, strict=True)
    model = HospitalModel(scenario.names, tuple(ward_model(w, h) for w, h in pairs),
                          scenario.outlying)  # fmt: skip
    arrivals = [forecast.paths for forecast in joint.results]
    inputs = draw_hospital(model, arrivals, Streams.from_seed(options.seed).ward)
    evaluate = _Evaluator(model, inputs, arrivals[0].shape[1], histories[0].start)
    start = tuple(int(ward.settings.beds) for ward in model.wards)
    beds, rows = start, []

    def record(change: str) -> None:
        risk, _, unmet = evaluate(beds)
        split = dict(zip(scenario.names, beds, strict=True))
        rows.append({"step": len(rows), "change": change, "total": sum(beds), "risk": risk,
                     "expected_unmet": unmet, **split})  # fmt: skip

    def meets(split) -> bool:
        return evaluate(split)[0] <= target

    record("scenario's beds")
    if total is None:
        while not meets(beds):
            beds, ward = _grow(evaluate, beds, 1, len(rows))
            record(f"+1 {scenario.names[ward]}")
        while (step := _step(evaluate, beds, -1, meets)) is not None:
            beds, ward = step
            record(f"-1 {scenario.names[ward]}")
    else:
        by = 1 if total > sum(beds) else -1
        while sum(beds) != total:
            beds, ward = _grow(evaluate, beds, by, len(rows))
            record(f"{by:+d} {scenario.names[ward]}")
        while len(rows) < MOST_STEPS and (moved := _exchange(evaluate, beds)) is not None:
            beds, source, sink = moved
            record(f"1 from {scenario.names[source]} to {scenario.names[sink]}")
    risk, se, unmet = evaluate(beds)
    return HospitalSizing(
        scenario=scenario, target=target, total=total, start_beds=start, beds=beds, risk=risk,
        risk_se=se, unmet=unmet, met=risk <= target, steps=pd.DataFrame(rows),
        least_gain=LEAST_GAIN, paths=options.paths, seed=options.seed,
    )  # fmt: skip


def _grow(evaluate, beds, by: int, steps: int):
    """The split one bed away in the direction ``by`` that leaves fewest patients without a
    bed; refused after :data:`MOST_STEPS` steps, or when no ward can give up a bed."""
    if steps >= MOST_STEPS:
        raise PlannerError(
            f"size: no split found within {MOST_STEPS} single-bed steps; the target may need "
            f"far more beds than the scenario has (or cannot be met by beds alone)"
        )
    step = _step(evaluate, beds, by, lambda split: True)
    if step is None:
        raise PlannerError("size: no ward can give up a bed")
    return step


def _exchange(evaluate, beds):
    """One bed moved from the ward that loses least to the ward that gains most, when that
    lowers the expected patients left without a bed by at least :data:`LEAST_GAIN` and by
    more than twice the standard error of the paired difference (a smaller gain is not told
    apart from the simulation's noise); else None."""
    loss = [(evaluate(_changed(beds, w, -1))[2], w) for w in range(len(beds)) if beds[w] > 1]
    gain = [(evaluate(_changed(beds, w, 1))[2], w) for w in range(len(beds))]
    if not loss:
        return None
    _, source = min(loss)
    _, sink = min(gain)
    if source == sink:
        return None
    moved = _changed(_changed(beds, source, -1), sink, 1)
    evaluate(moved)
    difference = evaluate.per_path[moved] - evaluate.per_path[beds]
    se = difference.std(ddof=1) / np.sqrt(difference.size) if difference.size > 1 else 0.0
    if not difference.mean() < -max(2 * se, LEAST_GAIN):
        return None
    return moved, source, sink

"""The one-way flow of a hospital run: hospital file -> each ward's records -> forecasts
drawn together -> wards simulated together -> per-ward and hospital summaries.

Each ward is read, modelled and summarised as in a run of that ward alone
(:mod:`planner.runs.run`); what differs is that the wards' admission forecasts share their
bootstrap draws (:mod:`planner.forecast.joint`, so busy days come together as in the
history) and that the wards are simulated together with the outlying rules
(:mod:`planner.hospital.model`). A ward's results therefore include what outlying did to it:
its patients placed elsewhere are not counted as finding no bed, and other wards' outliers
take its beds.
"""

from __future__ import annotations

import time

import numpy as np

from planner.errors import PlannerError
from planner.hospital.model import HospitalModel
from planner.hospital.result import HospitalResult
from planner.records.ward_history import WardHistory
from planner.results import HospitalRun, RunResult
from planner.runs.run import Streams, load_history, summarise_run
from planner.runs.ward_model import ward_model
from planner.scenario_hospital import HospitalScenario
from planner.simulate.model import RunOptions
from planner.summaries.hospital import (
    hospital_table,
    hospital_weeks,
    outlying_table,
    placements,
)
from planner.summaries.weekly import weekly_paths


def load_histories(scenario: HospitalScenario) -> tuple[WardHistory, ...]:
    """Every ward's history; refused when they do not end on the same day or start the
    simulation on different days."""
    histories = tuple(load_history(ward) for ward in scenario.scenarios)
    ends = {history.last_day for history in histories}
    if len(ends) > 1:
        pairs = zip(scenario.names, histories, strict=True)
        detail = ", ".join(f"{name} {history.last_day.date()}" for name, history in pairs)
        raise PlannerError(
            f"{scenario.source}: the wards' histories end on different days ({detail}); "
            f"give records up to the same day for every ward"
        )
    starts = {history.start for history in histories}
    if len(starts) > 1:
        raise PlannerError(f"{scenario.source}: the ward scenarios start on different days; "
                           f"give the same start (or none) in every ward file")  # fmt: skip
    return histories


def forecast_wards_step(scenario: HospitalScenario, histories, paths: int, seed: int):
    """The wards' admission paths, drawn together, over the gap and the horizon."""
    from planner.forecast.backtest_cache import cache_folder
    from planner.forecast.joint import forecast_wards

    first = histories[0]
    rng = np.random.default_rng(Streams.from_seed(seed).forecast)
    return forecast_wards(
        [history.admissions for history in histories],
        [ward.forecast for ward in scenario.scenarios],
        first.gap_days + scenario.horizon_days,
        paths,
        rng,
        first.first_day,
        cache_folder(),
    )


def run_hospital(
    scenario: HospitalScenario,
    options: RunOptions | None = None,
    *,
    histories: tuple[WardHistory, ...] | None = None,
    joint=None,
) -> HospitalRun:
    """Forecast, simulate and summarise a hospital with ``options`` (paths, seed and engine
    default to the hospital file's); ``histories`` and ``joint`` (the forecasts) reuse what
    an earlier run of the same wards made (common random numbers across plans)."""
    from planner.hospital.engines import simulate

    options = (options or RunOptions()).with_defaults(
        scenario.paths, scenario.seed, scenario.engine
    )
    timings: dict[str, float] = {}
    clock = time.perf_counter()
    histories = load_histories(scenario) if histories is None else histories
    timings["read_history_s"] = time.perf_counter() - clock
    clock = time.perf_counter()
    if joint is None:
        joint = forecast_wards_step(scenario, histories, options.paths, options.seed)
    timings["forecast_s"] = time.perf_counter() - clock
    clock = time.perf_counter()
    pairs = zip(scenario.scenarios, histories, strict=True)
    models = tuple(ward_model(ward, history) for ward, history in pairs)
    model = HospitalModel(scenario.names, models, scenario.outlying)
    arrivals = [forecast.paths for forecast in joint.results]
    result: HospitalResult = simulate(arrivals, model, Streams.from_seed(options.seed).ward,
                                      options)  # fmt: skip
    timings["simulate_s"] = time.perf_counter() - clock
    clock = time.perf_counter()
    wards = []
    for w, (ward, history) in enumerate(zip(scenario.scenarios, histories, strict=True)):
        weekly = weekly_paths(result.wards[w], history.start, models[w].planned is not None)
        wards.append(RunResult(
            scenario=ward, history=history, forecast=joint.results[w], model=models[w],
            ward=result.wards[w], weekly=weekly,
            summary=summarise_run(result.wards[w], weekly, history),
            paths=options.paths, seed=options.seed, timings={},
        ))  # fmt: skip
    weeks = hospital_weeks(result, histories[0].start)
    timings["summarise_s"] = time.perf_counter() - clock
    return HospitalRun(
        scenario=scenario,
        wards=tuple(wards),
        model=model,
        result=result,
        weeks=weeks,
        table=hospital_table(weeks),
        outlying=outlying_table(weeks),
        placements=placements(result),
        forecast_note=joint.note,
        paths=options.paths,
        seed=options.seed,
        timings=timings,
    )

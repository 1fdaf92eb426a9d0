"""Comparing ward plans with common random numbers.

Every scenario is run with the first scenario's seed and number of paths, so path i of every
plan sees the same forecast admissions (before the plan's own demand changes), the same
random numbers for arrival times and the same for stays: a difference between plans comes from
the plans, not from noise. That holds only for plans that share their history and forecast
(the same history files read the same way, the same forecast model settings); others are
refused, unless compared as independent runs (``independent=True``): then each plan runs with
its own seed and every difference has the unpaired standard error. Plans with the same stay
settings share one fitted length of stay. The tables are made by
:mod:`planner.summaries.comparison`.
"""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

import numpy as np

from planner.errors import PlannerError
from planner.results import Comparison, RunResult
from planner.runs.run import load_history, run_scenario
from planner.scenario import Scenario, load_scenario
from planner.simulate.model import RunOptions
from planner.summaries.comparison import PlanPaths, comparison_table, cost_table, glance_table


def _records_key(scenario: Scenario) -> tuple:
    return (scenario.admissions_file, scenario.episodes_file, scenario.history_format)


def _forecast_key(scenario: Scenario) -> tuple:
    return (*_records_key(scenario), scenario.forecast, scenario.horizon_weeks, scenario.start)


def _shared_key(scenario: Scenario) -> tuple:
    """What plans compared path by path must share: the records, read the same way, and the
    forecast model (a plan's demand changes scale the same paths)."""
    return (*_records_key(scenario), replace(scenario.forecast, demand=None))


def _difference(first: Scenario, other: Scenario) -> str:
    """What keeps two plans from sharing their history and forecast, in words."""
    if other.admissions_file != first.admissions_file:
        return "has a different admissions file"
    if other.episodes_file != first.episodes_file:
        return "has a different episodes file"
    if other.history_format != first.history_format:
        return "reads its history differently (ward, specialty or columns)"
    return "has different forecast settings"


def check_shared(scenarios: list[Scenario]) -> None:
    """Refuse plans that do not share their history and forecast with the first."""
    first = scenarios[0]
    for other in scenarios[1:]:
        if _shared_key(other) != _shared_key(first):
            raise PlannerError(
                f"{other.source}: {_difference(first, other)} from {first.source}, so the "
                f"plans do not share their history and forecast and cannot be compared path "
                f"by path; use --independent to compare them as independent runs"
            )


def independent_seed(seed: int, number: int) -> int:
    """The seed of plan ``number`` (0 = the first, which keeps ``seed``) of a comparison of
    independent runs: a child of ``seed``'s SeedSequence, so no two plans share draws."""
    if number == 0:
        return seed
    return int(np.random.SeedSequence([seed, number]).generate_state(1, np.uint64)[0] >> 1)


def _model_key(scenario: Scenario) -> tuple:
    return (*_records_key(scenario), scenario.stay, scenario.discharge, scenario.planned)


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


def _plan(plan: Path | Scenario) -> Scenario:
    """A compared plan (a scenario file, or a scenario read already): its scenario without
    the [sizing] target (a comparison does not size its plans; `planner size` does)."""
    scenario = plan if isinstance(plan, Scenario) else load_scenario(plan)
    return replace(scenario, sizing=None)


def _run_one(plan: Scenario, options: RunOptions) -> RunResult:
    """One scenario of a comparison, as run on a cluster worker."""
    return run_scenario(plan, options)


def run_all(
    files: list[Path | Scenario],
    options: RunOptions,
    progress=None,
    independent: bool = False,
    frames=None,
) -> tuple[RunResult, ...]:
    """Run every scenario with common random numbers (the first scenario's paths, seed and
    engine unless ``options`` gives them: every plan runs on one engine), reusing forecasts
    and fitted stays where the history and settings agree; ``progress(label)`` gives the
    progress callback of each plan. Plans that do not share their history and forecast are
    refused unless ``independent``: then each plan runs with its own seed
    (:func:`independent_seed`). With a scheduler in ``options``, each scenario runs on a
    dask worker (the forecast is then made on each worker, with the same result). ``files``
    may also hold scenarios read already; ``frames`` (:class:`HistoryFrames`) replace every
    plan's history files."""
    scenarios = [_plan(file) for file in files]
    _check_alike(scenarios)
    if not independent:
        check_shared(scenarios)
    first = scenarios[0]
    options = options.with_defaults(first.paths, first.seed, first.engine)
    histories = [load_history(scenario, frames) for scenario in scenarios]  # bad input first

    def plan_options(number: int, step=None) -> RunOptions:
        seed = independent_seed(options.seed, number) if independent else options.seed
        return replace(options, seed=seed, progress=step)

    if options.scheduler is not None:
        from planner.simulate.distributed import map_chunks

        if frames is not None:
            raise PlannerError("compare: histories given as tables run locally, not on a cluster")
        arguments = [
            (scenario, replace(plan_options(number), jobs=1, scheduler=None))
            for number, scenario in enumerate(scenarios)
        ]
        return tuple(map_chunks(options.scheduler, _run_one, arguments))
    forecasts: dict[tuple, object] = {}
    models: dict[tuple, object] = {}
    runs = []
    for number, (scenario, history) in enumerate(zip(scenarios, histories, strict=True), 1):
        step = None if progress is None else progress(f"{number}/{len(scenarios)}")
        run = run_scenario(
            scenario,
            plan_options(number - 1, step),
            history=history,
            forecast=None if independent else forecasts.get(_forecast_key(scenario)),
            model=models.get(_model_key(scenario)),
        )
        forecasts.setdefault(_forecast_key(scenario), run.forecast)
        models.setdefault(_model_key(scenario), run.model)
        runs.append(run)
    return tuple(runs)


def compare_scenarios(
    files: list[Path | Scenario],
    options: RunOptions,
    progress=None,
    independent: bool = False,
    frames=None,
) -> Comparison:
    """Run and compare scenarios (the first is the reference); ``independent`` compares plans
    that do not share their history and forecast as independent runs; ``files`` and
    ``frames`` as for :func:`run_all`."""
    if len(files) < 2:
        raise PlannerError("compare: give at least two scenario files")
    runs = run_all(files, options, progress, independent, frames)
    plans = [
        PlanPaths(run.scenario.name, run.scenario.costs, run.weekly, run.summary.weekly)
        for run in runs
    ]
    paired = not independent
    return Comparison(
        runs,
        comparison_table(plans, paired),
        cost_table(plans, paired),
        glance_table(plans, paired),
        paired,
    )

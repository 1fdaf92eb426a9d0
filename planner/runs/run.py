"""The one-way flow of a run: scenario -> records -> forecast paths -> simulated ward ->
summaries. Each step is a function; the CLI commands call :func:`run_scenario` and friends."""

from __future__ import annotations

import time
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from planner.errors import PlannerError
from planner.forecast.level_change import check_level_changes
from planner.forecast.requirements import check_history_length
from planner.records.files import (
    admissions_from_episodes,
    episodes_end,
    read_daily_admissions,
    read_episodes,
)
from planner.records.frames import HistoryFrames
from planner.records.ward_history import WardHistory
from planner.results import RunResult, RunSummary
from planner.runs.ward_model import (
    discharge_timing,
    emergency_history,
    planned_list,
    ward_model,
)
from planner.scenario import Scenario, load_scenario, plan_lines
from planner.simulate.discharge_fit import describe_discharges
from planner.simulate.model import RunOptions, WardModel, beds_open_by_day
from planner.summaries.daily import summarise_daily, summarise_shifts
from planner.summaries.shift_weekdays import shift_weekday_table
from planner.summaries.weekly import outlook, weekly_paths, weekly_table

#: Weeks of recorded census shown before the forecast.
RECENT_WEEKS = 8
#: Episode records may end this much before the daily admissions (a quiet last day) before
#: the current inpatients are taken to be unknown.
EPISODES_LAG = pd.Timedelta(days=3)


def load_history(scenario: Scenario, frames: HistoryFrames | None = None) -> WardHistory:
    """Read and cross-check the scenario's history files, or, when ``frames`` are given, use
    them instead of every history file (the Python interface)."""
    form = scenario.history_format
    if frames is not None:
        episodes, admissions = frames.checked_episodes(), frames.checked_admissions()
        if episodes is None and admissions is None:
            raise PlannerError("history: give admissions or episodes")
    else:
        episodes = read_episodes(scenario.episodes_file, form) if scenario.episodes_file else None
        admissions = None
        if scenario.admissions_file is not None:
            admissions = read_daily_admissions(scenario.admissions_file, form)
    if admissions is None and scenario.planned.given:
        admissions = _emergency_admissions(scenario, episodes)
    elif admissions is None:
        admissions = admissions_from_episodes(episodes)
    first_free = admissions.index[-1] + pd.Timedelta(days=1)
    start = first_free if scenario.start is None else pd.Timestamp(scenario.start)
    if start < first_free:
        raise PlannerError(
            f"{scenario.source}: start: {start.date()} is inside the history, which runs to "
            f"{admissions.index[-1].date()}; the forecast must start after it"
        )
    named = "episodes" if frames is not None else scenario.episodes_file
    if episodes is not None and episodes_end(episodes) >= first_free:
        late = episodes_end(episodes).date()
        raise PlannerError(
            f"{named}: has records on {late}, after the admissions history "
            f"ends ({admissions.index[-1].date()})"
        )
    if episodes is not None and episodes_end(episodes) < first_free - EPISODES_LAG:
        raise PlannerError(
            f"{named}: records end on {episodes_end(episodes).date()}, "
            f"before the admissions history ({admissions.index[-1].date()}); the patients on "
            f"the ward at the start would be missed: give episodes up to the same day"
        )
    forecast_days = (start - first_free).days + scenario.horizon_days
    source = scenario.admissions_file or scenario.episodes_file
    check_history_length(admissions, scenario.forecast, forecast_days, source)
    check_level_changes(admissions.index, scenario.forecast, forecast_days, scenario.source)
    history = WardHistory(admissions, episodes, start)
    check_patients_fit_beds(scenario, history)
    return history


def _emergency_admissions(scenario: Scenario, episodes: pd.DataFrame) -> pd.Series:
    """Daily emergency admissions from the episodes, for a scenario with a planned list (the
    planned patients are simulated from the list, so the forecast must leave them out)."""
    if "method" not in episodes:
        raise PlannerError(
            f"{scenario.episodes_file}: planned.list: the episodes carry no admission method, "
            f"so planned patients cannot be told from emergency ones and would be counted "
            f"twice; map the method column (history.columns.method, history.planned_methods, "
            f"history.emergency_methods) or give history.admissions with emergency admissions "
            f"only"
        )
    emergency = episodes[episodes["method"] == "emergency"]
    if emergency.empty:
        raise PlannerError(f"{scenario.episodes_file}: no emergency episodes to forecast from")
    return admissions_from_episodes(emergency, episodes_end(episodes))


def check_patients_fit_beds(scenario: Scenario, history: WardHistory) -> None:
    """Refuse episodes that put more patients on the ward at the start than beds are open that
    day (a file of several wards, or the wrong beds), unless ``history.over_beds = "allow"``;
    the message names the largest recorded census and its day."""
    if history.episodes is None or scenario.history_format.over_beds == "allow":
        return
    patients = history.inpatients_elapsed().size
    beds = int(beds_open_by_day(scenario.ward, history.first_day.date(), 1)[0])
    if patients <= beds:
        return
    census = history.census()
    raise PlannerError(
        f"{scenario.episodes_file}: {patients} patients on the ward at 00:00 on "
        f"{history.first_day.date()} but {beds} beds open (beds.base = {scenario.ward.beds}); "
        f"the records reach a census of {int(census.max())} on {census.idxmax().date()}: does "
        f"the file hold several wards? Name one with history.ward (or give one ward's "
        f"episodes), correct [beds], or set "
        f'history.over_beds = "allow" if the ward really was over its beds'
    )


def check_scenario(path: Path | None, scenario: Scenario | None = None) -> list[str]:
    """Validate a scenario and its files; lines describing what was found (``scenario``:
    the one read from ``path`` already, with changes a hospital file made to it)."""
    scenario = load_scenario(path) if scenario is None else scenario
    history = load_history(scenario)
    lines = [
        f"{scenario.source}: ok",
        f"scenario: {scenario.name}",
        f"history: {len(history.admissions)} days, {history.admissions.index[0].date()} to "
        f"{history.last_day.date()}, mean {history.admissions.mean():.2f} admissions/day",
        f"forecast: {scenario.horizon_weeks} weeks from {history.start.date()}, "
        f"{scenario.paths} paths, seed {scenario.seed}",
        f"beds: {scenario.ward.beds} base, {len(scenario.ward.bed_changes)} dated change(s), "
        f"policy {scenario.ward.policy}",
    ]
    if history.episodes is not None:
        methods = ""
        if "method" in history.episodes:
            counts = history.episodes["method"].value_counts()
            methods = f" ({counts['emergency']} emergency, {counts['planned']} planned)"
        lines.append(
            f"episodes: {len(history.episodes)}{methods}, {len(history.inpatients_elapsed())} "
            f"on the ward at the start"
        )
    for table in (history.admissions, history.episodes):
        lines += [] if table is None else list(table.attrs.get("notes", ()))
    timing = discharge_timing(scenario, emergency_history(scenario, history))
    lines.append(f"discharges: {describe_discharges(*timing)}")
    if scenario.planned.given:
        lines.append(
            f"planned: {planned_list(scenario, history).describe()}; the forecast covers "
            f"emergency admissions only"
        )
    return lines + plan_lines(scenario)


@dataclass(frozen=True)
class Streams:
    """Independent random streams of a run, all from the scenario's one seed: the forecast
    paths and the ward simulation (each path's own streams are spawned from the latter)."""

    forecast: np.random.SeedSequence
    ward: np.random.SeedSequence

    @classmethod
    def from_seed(cls, seed: int) -> Streams:
        forecast, ward = np.random.SeedSequence(seed).spawn(2)
        return cls(forecast, ward)


def forecast_step(scenario: Scenario, history: WardHistory, paths: int, seed: int):
    """Sample paths of daily admissions from the day after the history to the end of the
    scenario's horizon (days before a later ``start`` included: the ward is simulated
    through them). The backtest, when the settings ask for one, is read from the backtest
    cache (:mod:`planner.forecast.backtest_cache`) when the same history and settings were
    backtested before."""
    from planner.forecast.backtest_cache import cache_folder
    from planner.forecast.pipeline import forecast_admissions

    rng = np.random.default_rng(Streams.from_seed(seed).forecast)
    return forecast_admissions(
        history.admissions,
        scenario.forecast,
        history.gap_days + scenario.horizon_days,
        paths,
        rng,
        history.first_day,
        cache_folder(),
    )


def backtest_step(scenario: Scenario, history: WardHistory, paths: int, seed: int):
    """Rolling-origin backtest of the forecast strategies over the scenario's horizon."""
    from planner.forecast.backtest_cache import cache_folder
    from planner.forecast.pipeline import run_backtest

    rng = np.random.default_rng(Streams.from_seed(seed).forecast)
    return run_backtest(
        history.admissions,
        scenario.forecast,
        scenario.horizon_days,
        paths,
        rng,
        cache_folder(),
    )


def simulate_step(model: WardModel, arrivals: np.ndarray, options: RunOptions):
    """Simulate ``model`` for every arrival path with the seed, engine, processes and cluster
    of ``options`` (paths, seed and engine filled in); the result depends only on the seed."""
    from planner.simulate.engines import simulate

    return simulate(arrivals, model, Streams.from_seed(options.seed).ward, options)


def run_scenario(
    scenario: Scenario,
    options: RunOptions | None = None,
    *,
    history: WardHistory | None = None,
    forecast=None,
    model: WardModel | None = None,
) -> RunResult:
    """Forecast, simulate and summarise one scenario with ``options`` (paths, seed and engine
    default to the scenario's). ``history`` is the scenario's history when it has been read
    already; ``forecast`` reuses sample paths made earlier with the same history, forecast
    settings, paths and seed (common random numbers); ``model`` reuses a ward model made from
    the same history and stay settings (its beds and rota are replaced by the scenario's).
    A scenario with a ``[sizing]`` table is also sized on the same paths
    (:func:`planner.runs.sizing.size_scenario`)."""
    options = (options or RunOptions()).with_defaults(
        scenario.paths, scenario.seed, scenario.engine
    )
    timings: dict[str, float] = {}
    clock = time.perf_counter()
    history = load_history(scenario) if history is None else history
    timings["read_history_s"] = time.perf_counter() - clock
    clock = time.perf_counter()
    if forecast is None:
        forecast = forecast_step(scenario, history, options.paths, options.seed)
    timings["forecast_s"] = time.perf_counter() - clock
    clock = time.perf_counter()
    if model is None:
        model = ward_model(scenario, history)
    else:
        model = model.with_settings(scenario.ward)
    ward = simulate_step(model, forecast.paths, options)
    timings["simulate_s"] = time.perf_counter() - clock
    clock = time.perf_counter()
    weekly = weekly_paths(ward, history.start, model.planned is not None)
    summary = summarise_run(ward, weekly, history)
    timings["summarise_s"] = time.perf_counter() - clock
    sizing = None
    if scenario.sizing is not None:  # the scenario asks for a target: size on the same paths
        from planner.runs.sizing import size_scenario

        clock = time.perf_counter()
        sizing = size_scenario(
            scenario, scenario.sizing, options, history=history, forecast=forecast, model=model
        )
        timings["sizing_s"] = time.perf_counter() - clock
    return RunResult(
        scenario=scenario,
        history=history,
        forecast=forecast,
        model=model,
        ward=ward,
        weekly=weekly,
        summary=summary,
        paths=options.paths,
        seed=options.seed,
        timings=timings,
        sizing=sizing,
    )


def summarise_run(ward, weekly, history: WardHistory) -> RunSummary:
    """The tables across paths of a simulated ward and its weekly measures."""
    census = history.census()
    return RunSummary(
        weekly=weekly_table(weekly),
        daily=summarise_daily(ward),
        shifts=summarise_shifts(ward),
        outlook=outlook(weekly),
        shift_weekdays=shift_weekday_table(ward, history.start),
        recent_census=None if census is None else census.iloc[-7 * RECENT_WEEKS :],
    )

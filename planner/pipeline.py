"""The one-way flow of a run: scenario -> history -> forecast paths -> simulated ward ->
summaries. Each step is a function the CLI commands call."""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from planner.errors import PlannerError
from planner.forecast.requirements import check_history_length
from planner.history import (
    admissions_from_episodes,
    episodes_end,
    inpatients_at,
    read_daily_admissions,
    read_episodes,
)
from planner.scenario import Scenario, load_scenario

#: Recorded stays shorter than this (same-minute admission and discharge) are counted as
#: this long, so every stay is positive: one minute, in days.
MINIMUM_RECORDED_STAY_DAYS = 1.0 / (24 * 60)
#: Episode records may end this much before the daily admissions (a quiet last day) before
#: the current inpatients are taken to be unknown.
EPISODES_LAG = pd.Timedelta(days=3)
#: Paths per chunk of simulation work: small for the SimPy engine (the progress bar moves),
#: large for the fast engine (it works across the paths of a chunk at once).
SIMPY_CHUNK = 100
FAST_CHUNK = 4096


@dataclass(frozen=True)
class WardHistory:
    """What the ward's files say: daily admissions (gap-free), episodes (or None) and the
    first forecast day."""

    admissions: pd.Series
    episodes: pd.DataFrame | None
    start: pd.Timestamp

    @property
    def last_day(self) -> pd.Timestamp:
        return self.admissions.index[-1]

    @property
    def first_day(self) -> pd.Timestamp:
        """The day after the history: the ward is simulated from here, as the records leave
        it, even when the report starts later (``start``)."""
        return self.last_day + pd.Timedelta(days=1)

    @property
    def gap_days(self) -> int:
        """Days simulated before ``start``, not reported."""
        return (self.start - self.first_day).days

    def inpatients_elapsed(self) -> np.ndarray:
        """Elapsed stays (days) of the patients on the ward at 00:00 of the start day."""
        if self.episodes is None:
            return np.zeros(0)
        return inpatients_at(self.episodes, self.first_day)

    def stays(self) -> tuple[np.ndarray | None, np.ndarray | None]:
        """Stays (days) as known at the start and whether each has ended: stays still in
        progress are censored at the start (see :mod:`planner.simulate.survival`). Recorded
        stays shorter than a minute count as one minute. (None, None) without episodes."""
        from planner.simulate.survival import stays_at

        if self.episodes is None:
            return None, None
        durations, observed = stays_at(self.episodes, self.first_day)
        return np.maximum(durations, MINIMUM_RECORDED_STAY_DAYS), observed


def load_history(scenario: Scenario) -> WardHistory:
    """Read and cross-check the scenario's history files."""
    form = scenario.history_format
    episodes = read_episodes(scenario.episodes_file, form) if scenario.episodes_file else None
    if scenario.admissions_file is not None:
        admissions = read_daily_admissions(scenario.admissions_file, form)
    else:
        admissions = admissions_from_episodes(episodes)
    first_free = admissions.index[-1] + pd.Timedelta(days=1)
    start = first_free if scenario.start is None else pd.Timestamp(scenario.start)
    if start < first_free:
        raise PlannerError(
            f"{scenario.source}: start: {start.date()} is inside the history, which runs to "
            f"{admissions.index[-1].date()}; the forecast must start after it"
        )
    if episodes is not None and episodes_end(episodes) >= first_free:
        late = episodes_end(episodes).date()
        raise PlannerError(
            f"{scenario.episodes_file}: has records on {late}, after the admissions history "
            f"ends ({admissions.index[-1].date()})"
        )
    if episodes is not None and episodes_end(episodes) < first_free - EPISODES_LAG:
        raise PlannerError(
            f"{scenario.episodes_file}: records end on {episodes_end(episodes).date()}, "
            f"before the admissions history ({admissions.index[-1].date()}); the patients on "
            f"the ward at the start would be missed: give episodes up to the same day"
        )
    forecast_days = (start - first_free).days + scenario.horizon_days
    source = scenario.admissions_file or scenario.episodes_file
    check_history_length(admissions, scenario.forecast, forecast_days, source)
    return WardHistory(admissions, episodes, start)


def check_scenario(path: Path | None) -> list[str]:
    """Validate a scenario and its files; lines describing what was found."""
    scenario = load_scenario(path)
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
        lines.append(
            f"episodes: {len(history.episodes)}, {len(history.inpatients_elapsed())} on the "
            f"ward at the start"
        )
    return lines


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
    through them)."""
    from planner.forecast import forecast_admissions

    rng = np.random.default_rng(Streams.from_seed(seed).forecast)
    return forecast_admissions(
        history.admissions,
        scenario.forecast,
        history.gap_days + scenario.horizon_days,
        paths,
        rng,
        history.first_day,
    )


def backtest_step(scenario: Scenario, history: WardHistory, paths: int, seed: int):
    """Rolling-origin backtest of the forecast strategies over the scenario's horizon."""
    from planner.forecast import run_backtest

    rng = np.random.default_rng(Streams.from_seed(seed).forecast)
    return run_backtest(history.admissions, scenario.forecast, scenario.horizon_days, paths, rng)


@dataclass(frozen=True)
class WardInputs:
    """What the simulation needs besides the arrival paths."""

    stays: object  # planner.simulate.stays.StayDistribution
    inpatients_elapsed: np.ndarray
    hour_profile: np.ndarray


def ward_inputs(scenario: Scenario, history: WardHistory) -> WardInputs:
    """Length of stay, current inpatients and the hour-of-day profile from the history."""
    from planner.simulate.arrivals import hour_profile
    from planner.simulate.stay_fit import stay_distribution

    stays, observed = history.stays()
    admitted = None if history.episodes is None else history.episodes["admitted_at"]
    return WardInputs(
        stays=stay_distribution(scenario.stay, stays, observed),
        inpatients_elapsed=history.inpatients_elapsed(),
        hour_profile=hour_profile(admitted),
    )


def simulate_step(
    scenario: Scenario,
    inputs: WardInputs,
    arrivals: np.ndarray,
    start: pd.Timestamp,
    seed: int,
    progress=None,
    engine: str = "auto",
    jobs: int = 1,
    scheduler: str | None = None,
):
    """Simulate the ward for every arrival path; ``progress(done, total)`` is called as
    chunks of paths finish. With ``scheduler`` (a dask.distributed address) the chunks run
    on that cluster. The result depends on none of the engine, ``jobs`` or ``scheduler``."""
    from planner.simulate.engines import chosen_engine, simulate

    name = chosen_engine(engine, scenario.ward)
    chunk = SIMPY_CHUNK if name == "simpy" else FAST_CHUNK
    return simulate(
        arrivals,
        start.date(),
        scenario.ward,
        inputs.stays,
        inputs.inpatients_elapsed,
        inputs.hour_profile,
        Streams.from_seed(seed).ward,
        engine=name,
        jobs=jobs,
        chunk=min(chunk, max(1, -(-arrivals.shape[0] // jobs))),
        progress=progress,
        scheduler=scheduler,
    )


@dataclass(frozen=True)
class RunResult:
    """Everything one run produced, from the forecast to the weekly measures per path."""

    scenario: Scenario
    history: WardHistory
    forecast: object  # planner.forecast.ForecastResult
    inputs: WardInputs
    ward: object  # planner.simulate.ward.WardResult
    weekly: object  # planner.report.weekly.WeeklyPaths
    paths: int
    seed: int
    timings: dict[str, float]


def run_scenario(
    scenario: Scenario,
    paths: int | None = None,
    seed: int | None = None,
    progress=None,
    forecast=None,
    engine: str = "auto",
    jobs: int = 1,
    scheduler: str | None = None,
    history: WardHistory | None = None,
) -> RunResult:
    """Forecast, simulate and summarise one scenario. ``forecast`` reuses sample paths made
    earlier with the same history and forecast settings (common random numbers);
    ``scheduler`` sends the simulation's chunks of paths to a dask.distributed cluster;
    ``history`` is the scenario's history when it has been read already."""
    import time

    from planner.report.weekly import weekly_paths

    paths = scenario.paths if paths is None else paths
    seed = scenario.seed if seed is None else seed
    timings: dict[str, float] = {}
    clock = time.perf_counter()
    history = load_history(scenario) if history is None else history
    timings["read_history_s"] = time.perf_counter() - clock
    clock = time.perf_counter()
    if forecast is None:
        forecast = forecast_step(scenario, history, paths, seed)
    timings["forecast_s"] = time.perf_counter() - clock
    clock = time.perf_counter()
    inputs = ward_inputs(scenario, history)
    ward = simulate_step(
        scenario, inputs, forecast.paths, history.first_day, seed, progress, engine, jobs, scheduler
    )
    timings["simulate_s"] = time.perf_counter() - clock
    clock = time.perf_counter()
    weekly = weekly_paths(ward, history.start)
    timings["summarise_s"] = time.perf_counter() - clock
    return RunResult(scenario, history, forecast, inputs, ward, weekly, paths, seed, timings)

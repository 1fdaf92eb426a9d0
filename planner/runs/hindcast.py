"""Hindcast: started at past dates with only what was known then, would the tool have
predicted the census that happened?

For each origin (00:00 of a past day) the run is repeated with the data before it only:
daily admissions before the origin, episodes admitted before it with their stays as known then
(stays still running are censored at the origin, see :mod:`planner.simulate.survival`), the
patients on the ward at the origin with their elapsed stays, and the hour-of-day profile of
those admissions. The scenario's forecast settings give admission paths over its horizon, the
scenario's ward simulates them, and each day's simulated census (occupied beds at 24:00) is
compared with the census rebuilt from all the episode records (:mod:`planner.records.census`). The
horizon may run past the end of the history: only days with a recorded census are scored, so
late horizon weeks are scored on fewer origins (column ``origins`` of the summary). What-if
settings of the scenario (demand growth and surges, stay changes, dated bed changes) are
applied as they are: the hindcast scores the setup as written.

Default origins: every ``every_days`` days over the last ``weeks`` weeks of history, the
latest ``every_days`` days before the day after the history ends.

``hindcast.csv`` (one row per origin and scored day; census in patients at 24:00):
origin, date, horizon_day (1 = the origin's own day), horizon_week (1 = days 1-7), census
(recorded), beds_open (simulated ward's beds that day), model_mean, model_median,
model_lo50/hi50, model_lo80/hi80, model_lo95/hi95 (central intervals across paths),
model_pinball (pinball loss over the levels 0.05 .. 0.95), naive_start (census at the origin),
naive_median, naive_lo50 .. naive_hi95, naive_pinball (the carried-forward baseline of
:mod:`planner.summaries.hindcast_scores`), pit (randomised PIT), pit_sample (True on the days
used for the PIT chi-square: day 4 of each horizon week, each calendar date once, from the
latest origin before it), p_over_beds,
p_over_beds_minus_2, p_over_beds_minus_4 (share of paths with census > beds_open - 0, 2, 4),
naive_p_over_beds, naive_p_over_beds_minus_2, naive_p_over_beds_minus_4 (the naive
baseline's chance of the same: share of the history's h-day census changes that take the
census at the origin above the threshold).

Randomness: origin o uses ``SeedSequence(seed, spawn_key=(day number of o,))``, so its numbers
do not depend on the other origins or on ``workers``.
"""

from __future__ import annotations

import json
import os
from pathlib import Path

import numpy as np
import pandas as pd

from planner.errors import PlannerError
from planner.fingerprint import scenario_key
from planner.records.census import WARMUP_DAYS
from planner.results import HINDCAST_SIDECAR, HindcastQuote, HindcastResult
from planner.runs.run import forecast_step, load_history, simulate_step
from planner.runs.ward_model import ward_model
from planner.scenario import Scenario
from planner.simulate.model import RunOptions
from planner.simulate.workers import worker_setup
from planner.summaries import hindcast_scores as scores

#: Threshold columns -> beds below beds open.
THRESHOLDS = {"p_over_beds": 0, "p_over_beds_minus_2": 2, "p_over_beds_minus_4": 4}
PIT_DAY_OF_WEEK = 4  # the day of each horizon week whose PIT enters the chi-square test


def weeks_covered(origins: pd.DatetimeIndex, last_day: pd.Timestamp) -> int:
    """Whole weeks from the first origin to the end of the history (26 for the defaults)."""
    return int(np.ceil(((pd.Timestamp(last_day) - origins.min()).days + 1) / 7))


def default_origins(last_day: pd.Timestamp, weeks: int = 26, every_days: int = 14):
    """Origins every ``every_days`` days over the last ``weeks`` weeks before the day after
    ``last_day``, oldest first."""
    if every_days < 1 or weeks < 1:
        raise PlannerError("every_days and weeks must be >= 1")
    first_free = pd.Timestamp(last_day).normalize() + pd.Timedelta(days=1)
    steps = np.arange(7 * weeks // every_days, 0, -1) * every_days
    return pd.DatetimeIndex([first_free - pd.Timedelta(days=int(s)) for s in steps])


def _origin_seeds(seed: int, origin: pd.Timestamp) -> tuple[int, np.random.Generator]:
    root = np.random.SeedSequence(seed, spawn_key=(int(origin.value // 86_400_000_000_000),))
    run_seed = int(root.generate_state(1, np.uint64)[0])
    return run_seed, np.random.default_rng(root.spawn(1)[0])


def _band_columns(prefix: str, quantiles: np.ndarray) -> dict[str, np.ndarray]:
    at = {level: quantiles[:, i] for i, level in enumerate(scores.BAND_LEVELS)}
    out = {f"{prefix}_median": at[0.5]}
    for percent, (low, high) in scores.INTERVALS.items():
        out[f"{prefix}_lo{percent}"] = at[low]
        out[f"{prefix}_hi{percent}"] = at[high]
    return out


def hindcast_origin(
    scenario, history, census, origin, paths, seed, engine: str = "auto"
) -> pd.DataFrame:
    """The hindcast.csv rows of one origin (``engine`` as in
    :func:`planner.simulate.engines.simulate`; the result does not depend on it)."""
    origin = pd.Timestamp(origin).normalize()
    known = history.known_at(origin)
    run_seed, pit_rng = _origin_seeds(seed, origin)
    forecast = forecast_step(scenario, known, paths, run_seed)
    options = RunOptions(paths=paths, seed=run_seed, engine=engine)
    ward = simulate_step(ward_model(scenario, known), forecast.paths, options)
    days = scenario.horizon_days
    simulated, beds = ward.census, ward.beds_open[:days]
    dates = pd.date_range(origin, periods=days, freq="D")
    scored = int(np.count_nonzero(dates <= census.index[-1]))
    simulated, beds, dates = simulated[:, :scored], beds[:scored], dates[:scored]
    actual = census.reindex(dates).to_numpy()
    before = census[
        (census.index < origin) & (census.index >= census.index[0] + pd.Timedelta(days=WARMUP_DAYS))
    ]
    if before.size < 2:
        raise PlannerError(f"origin {origin.date()}: too little census history before it")
    start = int(census[origin - pd.Timedelta(days=1)])
    levels = tuple(sorted(set(scores.BAND_LEVELS) | set(scores.PINBALL_LEVELS)))
    model_q = scores.quantiles_of_paths(simulated, levels)
    naive_q = start + scores.census_changes_quantiles(before.to_numpy(), scored, levels)
    pick = [levels.index(level) for level in scores.BAND_LEVELS]
    pinball = [levels.index(level) for level in scores.PINBALL_LEVELS]
    horizon_day = np.arange(1, scored + 1)
    rows = {
        "origin": np.full(scored, origin),
        "date": dates,
        "horizon_day": horizon_day,
        "horizon_week": (horizon_day - 1) // 7 + 1,
        "census": actual,
        "beds_open": beds,
        "model_mean": simulated.mean(axis=0),
        **_band_columns("model", model_q[:, pick]),
        "model_pinball": scores.pinball_by_day(actual, model_q[:, pinball], scores.PINBALL_LEVELS),
        "naive_start": np.full(scored, start),
        **_band_columns("naive", naive_q[:, pick]),
        "naive_pinball": scores.pinball_by_day(actual, naive_q[:, pinball], scores.PINBALL_LEVELS),
        "pit": scores.randomised_pit(simulated, actual, pit_rng),
        "pit_sample": (horizon_day - 1) % 7 + 1 == PIT_DAY_OF_WEEK,
    }
    for column, offset in THRESHOLDS.items():
        rows[column] = np.mean(simulated > (beds - offset)[None, :], axis=0)
    for column, offset in THRESHOLDS.items():
        rows[f"naive_{column}"] = scores.naive_chance_above(before.to_numpy(), start, beds - offset)
    return pd.DataFrame(rows)


def _run_one(arguments) -> pd.DataFrame:
    return hindcast_origin(*arguments)


def _map(arguments: list, workers: int) -> list[pd.DataFrame]:
    """Origins in order, in ``workers`` processes; each worker keeps BLAS to one thread so two
    workers do not fight over the cores (the results do not depend on ``workers``)."""
    if workers <= 1 or len(arguments) <= 1:
        return [_run_one(a) for a in arguments]
    import multiprocessing

    saved = {k: os.environ.get(k) for k in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS")}
    os.environ.update({k: "1" for k in saved})
    try:
        context = multiprocessing.get_context("spawn")
        pool = context.Pool(min(workers, len(arguments)), initializer=worker_setup)
    finally:
        for k, v in saved.items():
            if v is None:
                os.environ.pop(k, None)
            else:
                os.environ[k] = v
    with pool:
        return pool.map(_run_one, arguments, chunksize=1)


def _notes(scenario: Scenario, table: pd.DataFrame) -> tuple[str, ...]:
    notes = []
    over = int((table.drop_duplicates("date").eval("census > beds_open")).sum())
    if over:
        notes.append(
            f"The recorded census exceeded the beds open on {over} of the scored days; the "
            f"simulated census (occupied beds) cannot, so those days count against the model."
        )
    demand, stay = scenario.forecast.demand, scenario.stay
    if demand.growth or demand.surges or stay.change_days or stay.scale != 1.0:
        notes.append("This setup changes demand or stays (what-if settings); they were applied.")
    return tuple(notes)


def hindcast(
    scenario: Scenario,
    origins=None,
    every_days: int = 14,
    weeks: int = 26,
    paths: int = 300,
    seed: int | None = None,
    workers: int = 1,
    engine: str = "auto",
) -> HindcastResult:
    """Hindcast ``scenario`` from each origin (default :func:`default_origins`) with ``paths``
    sample paths per origin, origins run in ``workers`` processes, the ward simulated by
    ``engine`` ("simpy", "fast" or "auto"); see the module docstring."""
    if paths < 2:
        raise PlannerError(f"paths must be >= 2, got {paths}")
    if scenario.episodes_file is None:
        raise PlannerError(
            f"{scenario.source}: history.episodes: a hindcast needs episode records "
            f"(the census is rebuilt from them)"
        )
    seed = scenario.seed if seed is None else int(seed)
    history = load_history(scenario)
    census = history.census()
    if origins is None:
        origins = default_origins(history.last_day, weeks, every_days)
    origins = pd.DatetimeIndex(origins).normalize()
    if len(origins) == 0:
        raise PlannerError("origins: no origin to hindcast from")
    earliest = census.index[0] + pd.Timedelta(days=WARMUP_DAYS + 1)
    if origins.max() > history.last_day or origins.min() < earliest:
        raise PlannerError(
            f"origins: must lie between {earliest.date()} and {history.last_day.date()} "
            f"(inside the history, after its first {WARMUP_DAYS} days)"
        )
    arguments = [(scenario, history, census, o, paths, seed, engine) for o in origins]
    table = one_pit_per_date(pd.concat(_map(arguments, workers), ignore_index=True))
    sample = table[table["pit_sample"]]
    counts, chi_square, p_value = scores.pit_chi_square(sample["pit"].to_numpy())
    reliability = []
    for column, offset in THRESHOLDS.items():
        outcome = table["census"] > table["beds_open"] - offset
        part = scores.reliability_table(table[column], outcome)
        reliability.append(part.assign(threshold=column[2:])[["threshold", *part.columns]])
    return HindcastResult(
        scenario_name=scenario.name,
        scenario_key=scenario_key(scenario),
        origins=origins,
        horizon_days=scenario.horizon_days,
        last_day=history.last_day,
        weeks=weeks_covered(origins, history.last_day),
        paths=paths,
        seed=seed,
        table=table,
        summary=scores.summary_by_week(table, THRESHOLDS),
        reliability=pd.concat(reliability, ignore_index=True),
        pit_counts=counts,
        chi_square=chi_square,
        p_value=p_value,
        notes=_notes(scenario, table),
    )


def one_pit_per_date(table: pd.DataFrame) -> pd.DataFrame:
    """``table`` with ``pit_sample`` kept on one row per calendar date: the latest origin's
    (its freshest forecast). Origins closer together than the horizon forecast the same dates,
    and the PIT values of one date from several origins share that date's census: counted
    several times, they would make the chi-square test reject a well-calibrated model."""
    sampled = table[table["pit_sample"]].sort_values(["date", "origin"])
    kept = sampled.drop_duplicates("date", keep="last").index
    return table.assign(pit_sample=table.index.isin(kept))


def latest_hindcast(roots: list[Path], scenario: Scenario) -> HindcastQuote | None:
    """The newest hindcast saved for this setup (same :func:`scenario_key`) in any folder
    directly under one of ``roots`` (e.g. outputs/), as its sidecar records it, or None."""
    key = scenario_key(scenario)
    found = []
    for root in dict.fromkeys(Path(r) for r in roots):
        for sidecar in sorted(root.glob(f"*/{HINDCAST_SIDECAR}")) if root.is_dir() else []:
            record = json.loads(sidecar.read_text())
            if record.get("scenario_key") == key and (sidecar.parent / "hindcast.csv").is_file():
                found.append(record)
    if not found:
        return None
    record = max(found, key=lambda item: item.get("created", ""))
    return HindcastQuote(
        weeks=record["weeks"],
        origins=len(record["origins"]),
        created=record["created"][:10],
        coverage_80=record["coverage"]["80"],
    )

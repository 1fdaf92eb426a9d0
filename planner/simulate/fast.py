"""Ward simulation vectorised across paths (numpy only): the SimPy ward model, many paths at once.

``simulate_ward_fast`` takes the arguments of :func:`planner.simulate.ward.simulate_ward` and
returns the same ``WardResult`` (same tables, columns, dtypes and meaning). The bed rules are
those of the SimPy model (see :mod:`planner.simulate.fast_beds`); occupancy, queue and staffing
records follow :mod:`planner.simulate.fast_records` and :func:`staffing.shift_table`.

Random streams (``streams``):

- ``"spawned"`` (default): the SimPy model's streams. Path ``i`` uses child ``i`` of
  ``SeedSequence(seed)`` and, within it, ``spawn(3)`` for arrival times, stays of new patients
  and remaining stays of current inpatients, drawn as the SimPy model draws them. With the same
  seed both engines see the same arrivals and stays, so their results agree path by path
  (exactly equal event times aside, which continuous stays make probability 0).
- ``"counter"``: faster set-up, the same distributions but other numbers. One Philox key comes
  from the seed; path ``i`` draws its arrival times from counter block ``(0, i, 0, 0)`` and its
  stays from ``(0, i, 1, 0)``; the remaining stays of all paths come in path order from block
  ``(0, 0, 2, 0)``, one uniform per inpatient (the ``sample_remaining`` contract), so path ``i``
  starts at uniform ``i x inpatients``. Results depend only on the seed and the path number,
  never on how paths are chunked.
"""

from __future__ import annotations

from datetime import date
from typing import TYPE_CHECKING

import numpy as np

from planner.errors import PlannerError
from planner.simulate.fast_beds import HOURS_PER_DAY, allocate_beds
from planner.simulate.fast_records import daily_records
from planner.simulate.settings import WardSettings
from planner.simulate.staffing import shift_table
from planner.simulate.ward import (
    DAILY_COLUMNS,
    WardResult,
    _check_inputs,
    _daily_frame,
    beds_open_by_day,
    path_seeds,
)

if TYPE_CHECKING:
    from planner.simulate.stays import StayDistribution

STREAMS = ("spawned", "counter")
#: Paths simulated together; bounds memory (about 1 kB per path and day) whatever the total.
BLOCK_PATHS = 4096
#: Spawn key word reserved for the counter streams' Philox key (path numbers stay below it).
_COUNTER_KEY_WORD = 2**63


def arrival_hours(uniforms: np.ndarray, counts: np.ndarray, profile: np.ndarray) -> np.ndarray:
    """Arrival times of one path (hours since 00:00 of day 0, sorted) from ``2 x total``
    uniforms: the first half picks each admission's hour of day from ``profile``, the second
    half the time within the hour.

    Given ``uniforms = rng.random(2 * total)`` this equals
    :func:`planner.simulate.arrivals.arrival_times` with the same ``rng``: ``Generator.choice``
    with probabilities draws one uniform per value and inverts the cumulative shares, then the
    times within the hour are the next uniforms (the tests check the equality)."""
    total = uniforms.size // 2
    p = profile / profile.sum()
    cdf = p.cumsum()
    cdf /= cdf[-1]
    hour = cdf.searchsorted(uniforms[:total], side="right")
    day = np.repeat(np.arange(counts.size), counts)
    times = day * 24 + hour + uniforms[total:]
    return np.sort(np.minimum(times, np.nextafter((day + 1) * 24.0, 0)))


def _spawned_draws(seed, counts, stays, elapsed, profile, first_path):
    """Arrival hours, stay hours and remaining stay hours of each path, drawn as the SimPy
    model draws them."""
    arrivals, stay_hours, remaining = [], [], []
    for i, path_seed in enumerate(path_seeds(seed, counts.shape[0], first_path)):
        arrival_seed, stay_seed, remaining_seed = path_seed.spawn(3)
        total = int(counts[i].sum())
        uniforms = np.random.default_rng(arrival_seed).random(2 * total)
        arrivals.append(arrival_hours(uniforms, counts[i], profile))
        stay_hours.append(24.0 * np.asarray(stays.sample(np.random.default_rng(stay_seed), total)))
        if elapsed.size:
            rng = np.random.default_rng(remaining_seed)
            remaining.append(24.0 * np.asarray(stays.sample_remaining(rng, elapsed)))
    if not elapsed.size:
        return arrivals, stay_hours, np.zeros((counts.shape[0], 0))
    return arrivals, stay_hours, np.array(remaining)


def _philox(key: np.ndarray, path: int, stream: int) -> np.random.Generator:
    return np.random.Generator(np.random.Philox(counter=[0, path, stream, 0], key=key))


def _counter_draws(seed, counts, stays, elapsed, profile, first_path):
    """Arrival hours, stay hours and remaining stay hours of each path from counter-based
    Philox streams (see the module docstring)."""
    base = seed if isinstance(seed, np.random.SeedSequence) else np.random.SeedSequence(seed)
    key_seed = np.random.SeedSequence(base.entropy, spawn_key=(*base.spawn_key, _COUNTER_KEY_WORD))
    key = key_seed.generate_state(2, np.uint64)
    bits = np.random.Philox(key=key)
    rng = np.random.Generator(bits)
    state = bits.state
    arrivals, stay_hours = [], []
    for i in range(counts.shape[0]):
        total = int(counts[i].sum())
        for stream in (0, 1):
            state["state"]["counter"][:] = (0, first_path + i, stream, 0)
            state["buffer_pos"] = 4
            bits.state = state
            if stream == 0:
                arrivals.append(arrival_hours(rng.random(2 * total), counts[i], profile))
            else:
                stay_hours.append(24.0 * np.asarray(stays.sample(rng, total)))
    if not elapsed.size:
        return arrivals, stay_hours, np.zeros((counts.shape[0], 0))
    skip = first_path * elapsed.size  # uniforms used by the paths before this chunk
    state["state"]["counter"][:] = (skip // 4, 0, 2, 0)
    state["buffer_pos"] = 4
    bits.state = state
    rng.random(skip % 4)
    every = np.tile(elapsed, counts.shape[0])
    remaining = 24.0 * np.asarray(stays.sample_remaining(rng, every))
    return arrivals, stay_hours, remaining.reshape(counts.shape[0], elapsed.size)


def _columns(rows: list[np.ndarray], used: np.ndarray, fill: float) -> np.ndarray:
    """(slots x columns) array with ``rows[j]`` down column j (``used``: columns x slots)."""
    out = np.full(used.shape, fill)
    out[used] = np.concatenate(rows) if rows else np.zeros(0)
    return np.ascontiguousarray(out.T)


def _simulate_block(counts, ward, beds, stays, elapsed, profile, seed, first_path, streams):
    """Daily columns (paths x days) and shift peaks of one block of paths."""
    draw = _spawned_draws if streams == "spawned" else _counter_draws
    arrivals, stay_hours, remaining = draw(seed, counts, stays, elapsed, profile, first_path)
    totals = counts.sum(axis=1)
    order = np.argsort(-totals, kind="stable")  # most arrivals first (see allocate_beds)
    used = np.arange(int(totals.max()) if totals.size else 0) < totals[order][:, None]
    arrival = _columns([arrivals[i] for i in order], used, np.inf)
    stay = _columns([stay_hours[i] for i in order], used, 0.0)
    # The SimPy clock reads each arrival as the previous reading plus the gap between the two.
    finite = np.where(used.T, arrival, 0.0)
    gaps = np.where(used.T, np.diff(finite, axis=0, prepend=0.0), 0.0)
    clock = np.where(used.T, np.cumsum(gaps, axis=0), np.inf)
    times = allocate_beds(
        arrival, clock, stay, totals[order], remaining[order], beds, wait=ward.policy == "wait"
    )
    shifts = ward.staffing.shifts
    shift_order = np.argsort([shift.start_hour for shift in shifts], kind="stable")
    starts = np.array([shifts[j].start_hour for j in shift_order])
    days = counts.shape[1]
    shift_bounds = np.append(
        (HOURS_PER_DAY * np.arange(days)[:, None] + starts).ravel(), HOURS_PER_DAY * days
    )
    daily, peaks = daily_records(times, arrival, order, counts, remaining, beds, shift_bounds)
    shift_peak = np.zeros((counts.shape[0], days, len(shifts)), dtype=np.int32)
    shift_peak[:, :, shift_order] = peaks.reshape(counts.shape[0], days, len(shifts))
    return daily, shift_peak


def simulate_ward_fast(
    arrivals: np.ndarray,
    start: date,
    ward: WardSettings,
    stays: StayDistribution,
    inpatients_elapsed: np.ndarray,
    hour_profile: np.ndarray,
    seed: int | np.random.SeedSequence,
    *,
    first_path: int = 0,
    streams: str = "spawned",
) -> WardResult:
    """Simulate the ward for every path of daily ``arrivals`` (paths x days, patients): the
    arguments and result of :func:`planner.simulate.ward.simulate_ward`, computed for many
    paths at once. ``streams``: "spawned" (the SimPy model's random numbers, so the same seed
    gives the same paths) or "counter" (faster; see the module docstring)."""
    arrivals = np.asarray(arrivals)
    elapsed = np.asarray(inpatients_elapsed, dtype=float)
    profile = np.asarray(hour_profile, dtype=float)
    _check_inputs(arrivals, elapsed, profile, ward)
    if streams not in STREAMS:
        raise PlannerError(f"streams must be one of {STREAMS}, got {streams!r}")
    counts = arrivals.astype(np.int64)
    paths, days = counts.shape
    beds = beds_open_by_day(ward, start, days)
    daily = {name: np.zeros((paths, days)) for name in DAILY_COLUMNS}
    shift_peak = np.zeros((paths, days, len(ward.staffing.shifts)), dtype=np.int32)
    for first in range(0, paths, BLOCK_PATHS):
        block = slice(first, first + BLOCK_PATHS)
        part, shift_peak[block] = _simulate_block(
            counts[block], ward, beds, stays, elapsed, profile, seed, first_path + first, streams
        )
        for name, values in part.items():
            daily[name][block] = values
    return WardResult(
        daily=_daily_frame(daily, start, first_path),
        shifts=shift_table(shift_peak, ward.staffing, start, first_path),
    )

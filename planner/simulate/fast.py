"""Ward simulation vectorised across paths (numpy only): the SimPy ward model, many paths at once.

``simulate_ward_fast`` takes the arguments of :func:`planner.simulate.ward.simulate_ward` and
returns the same ``WardResult`` (same arrays, dtypes and meaning). The bed rules are those of
the SimPy model (see :mod:`planner.simulate.fast_beds`); occupancy, queue and staffing records
follow :mod:`planner.simulate.fast_records`; the random streams, the SimPy model's, are drawn
as in :mod:`planner.simulate.fast_streams`. With the same seed both engines see the same
arrivals and stays, so their results agree path by path (exactly equal event times aside,
which continuous stays make probability 0).

Paths run in blocks of at most ``BLOCK_PATHS``; a block's arrays are (arrival slots x paths),
paths ordered by decreasing arrivals, so that the step for the k-th arrival of every path reads
contiguous rows.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from planner.simulate.fast_beds import allocate_beds
from planner.simulate.fast_records import Pieces, daily_records
from planner.simulate.fast_streams import draw_block
from planner.simulate.lookup import UnitSearch
from planner.simulate.result import PATH_DAILY, WardResult, ward_result
from planner.simulate.settings import WardSettings
from planner.simulate.ward import beds_open_by_day, check_arrivals

if TYPE_CHECKING:
    from planner.simulate.model import WardModel

#: Most paths simulated together: bounds memory (about 0.2 kB per path and arrival) and keeps
#: the per-step arrays of bed release times small enough for the processor's cache (2048 ran
#: 10,000 demo paths about a fifth faster than 4096 in a fresh process, 1024 no faster).
BLOCK_PATHS = 2048
#: Paths per band when turning (paths x slots) arrays into (slots x paths) ones.
_BAND = 256


def hours_of_day(uniforms: np.ndarray, profile: np.ndarray) -> np.ndarray:
    """Hour of the day (0-23) for each uniform in [0, 1): the number of entries of the
    cumulative ``profile`` at or below it (``searchsorted(cdf, u, "right")``, as
    ``Generator.choice`` inverts it), read from a table (:class:`UnitSearch`)."""
    p = profile / profile.sum()
    cdf = p.cumsum()
    cdf /= cdf[-1]
    return UnitSearch(cdf, "right", bits=12)(uniforms)


def arrival_rows(hour_uniforms, within_uniforms, counts, profile) -> np.ndarray:
    """Sorted arrival hours (since 00:00 of day 0) of many paths, one row each: row r has
    ``counts[r].sum()`` arrivals, ``counts[r, d]`` on day d, the t-th of them at d x 24 + the
    hour picked by ``hour_uniforms[r, t]`` + ``within_uniforms[r, t]``; entries after a
    row's arrivals are >= the end of the window."""
    rows, slots = hour_uniforms.shape
    days = counts.shape[1]
    ends = np.cumsum(counts, axis=1)  # a day's arrivals end before this slot
    marks = np.bincount((np.arange(rows)[:, None] * (slots + 1) + ends).ravel(),
                        minlength=rows * (slots + 1)).reshape(rows, slots + 1)  # fmt: skip
    day = np.cumsum(marks[:, :slots], axis=1)  # days ended at or before each slot
    times = day * 24
    times += hours_of_day(hour_uniforms, profile)
    times = times + within_uniforms
    # Never let rounding carry an arrival into the next day: d*24 + 23 + within < d*24 + 24.
    last_moment = np.nextafter((np.arange(days + 1) + 1) * 24.0, 0)
    np.minimum(times, last_moment[day], out=times)
    times.sort(axis=1)
    return times


def by_slot(rows: np.ndarray, scale: float | None = None) -> np.ndarray:
    """(slots x paths) C-ordered copy of (paths x slots) ``rows`` (times ``scale`` if given),
    copied in bands of ``_BAND`` paths so that both sides of each band stay in cache."""
    out = np.empty(rows.shape[::-1])
    for lo in range(0, rows.shape[0], _BAND):
        band = rows[lo : lo + _BAND].T
        if scale is None:
            out[:, lo : lo + _BAND] = band
        else:
            np.multiply(band, scale, out=out[:, lo : lo + _BAND])
    return out


def simpy_clock(arrival: np.ndarray) -> np.ndarray:
    """The SimPy clock's reading of each arrival (slots x paths, hours): the running sum down
    each column of the gaps between arrivals, the first gap from 0, added in order (as
    ``np.cumsum(np.diff(arrival, axis=0, prepend=0.0), axis=0)``, one row at a time, which
    is much faster for this layout)."""
    clock = np.empty_like(arrival)
    if arrival.shape[0]:
        clock[0] = arrival[0]
        np.subtract(arrival[1:], arrival[:-1], out=clock[1:])
        for k in range(1, arrival.shape[0]):
            np.add(clock[k - 1], clock[k], out=clock[k])
    return clock


def _shift_starts(ward: WardSettings) -> tuple[np.ndarray, np.ndarray]:
    """Shift start hours in increasing order, and the staffing position of each."""
    shifts = ward.staffing.shifts
    order = np.argsort([shift.start_hour for shift in shifts], kind="stable")
    return np.array([shifts[j].start_hour for j in order], dtype=float), order


def _simulate_block(counts, model: WardModel, beds, seed, first_path):
    """Daily measures (paths x days) and shift peaks (paths x days x shifts) of one block."""
    paths, days = counts.shape
    ward, elapsed = model.settings, model.inpatients_elapsed
    totals = counts.sum(axis=1)
    order = np.argsort(-totals, kind="stable")  # most arrivals first (see allocate_beds)
    draws = draw_block(seed, first_path, totals, order, model.stays, elapsed)
    rows = arrival_rows(draws.hour_uniforms, draws.within_uniforms, counts[order],
                        model.hour_profile)  # fmt: skip
    arrival = by_slot(rows)
    stay = by_slot(draws.stay_days, 24.0)
    remaining = 24.0 * draws.remaining_days
    # The SimPy clock reads each arrival as the previous reading plus the gap between the two.
    clock = simpy_clock(arrival)
    times = allocate_beds(
        arrival, clock, stay, totals[order], remaining[order], beds, wait=ward.policy == "wait"
    )
    starts, shift_order = _shift_starts(ward)
    daily, peaks = daily_records(times, arrival, order, counts, remaining, Pieces(days, starts))
    shift_peak = np.empty_like(peaks)
    shift_peak[:, :, shift_order] = peaks
    return daily, shift_peak


def simulate_ward_fast(
    arrivals: np.ndarray,
    model: WardModel,
    seed: int | np.random.SeedSequence,
    *,
    first_path: int = 0,
) -> WardResult:
    """Simulate ``model`` for every path of daily ``arrivals`` (paths x days, patients): the
    arguments and result of :func:`planner.simulate.ward.simulate_ward`, computed for many
    paths at once with the same random numbers, so the same seed gives the same paths."""
    arrivals = np.asarray(arrivals)
    check_arrivals(arrivals)
    ward, start = model.settings, model.start
    counts = arrivals.astype(np.int64)
    paths, days = counts.shape
    beds = beds_open_by_day(ward, start, days)
    daily = {name: np.zeros((paths, days), np.float64 if name == "wait_hours" else np.int32)
             for name in PATH_DAILY}  # fmt: skip
    shift_peak = np.zeros((paths, days, len(ward.staffing.shifts)), dtype=np.int32)
    blocks = max(-(-paths // BLOCK_PATHS), 1)
    bounds = [paths * b // blocks for b in range(blocks + 1)]  # blocks of nearly equal size
    for lo, hi in zip(bounds[:-1], bounds[1:], strict=True):
        if hi == lo:
            continue
        part, shift_peak[lo:hi] = _simulate_block(counts[lo:hi], model, beds, seed, first_path + lo)
        for name in PATH_DAILY:
            daily[name][lo:hi] = part[name]
    return ward_result(start, first_path, daily, beds, shift_peak, ward.staffing)

"""Bed allocation for many paths at once: the ward model's bed rules, vectorised across paths.

The k-th arrival of every path is handled in one step of numpy operations. Each path keeps an
array of bed release times (hours, one entry per patient in a bed; free entries hold -inf), of
fixed width: the most beds open on any day, or the current inpatients if more. Occupied beds at
time t = entries > t (patients discharged at t have left). The rules are those of
:mod:`planner.simulate.ward`:

- a patient gets a bed at time t only while occupied beds < beds open that day (so when beds
  close on a full ward nobody is moved, and nobody new comes in until occupancy is below the
  beds open);
- "divert": a patient who finds no free bed on arrival is placed elsewhere;
- "wait": first come, first served, so patient k takes a bed at the first time t >= max(arrival
  k, bed time of patient k-1) with occupied(t) < beds open(t); that is either that time itself,
  a discharge, or 00:00 of a later day on which more beds open.

Times follow the SimPy clock exactly: an arrival's clock reading is the running sum of the gaps
between arrivals, a discharge is the bed time plus the stay, so that, given the same times, the
results are those of the SimPy model (exact ties between events aside, which have probability 0
for continuous times and are resolved here discharges first).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

HOURS_PER_DAY = 24.0


@dataclass(frozen=True)
class BedTimes:
    """Per patient (arrival slots x paths): ``bed_hour`` (hours; NaN if never in a bed in the
    window), ``released`` (discharge hour on the SimPy clock, +inf if never in a bed),
    ``level`` (occupied beds just after the patient took the bed), ``waited`` and ``diverted``
    (bool; False in unused slots)."""

    bed_hour: np.ndarray
    released: np.ndarray
    level: np.ndarray
    waited: np.ndarray
    diverted: np.ndarray


def _day(hours: np.ndarray, days: int) -> np.ndarray:
    """Day index of finite hours in the window (clipped to the last day)."""
    return np.minimum((hours // HOURS_PER_DAY).astype(np.int64), days - 1)


def _earliest_bed(releases, after, beds_open):
    """For each row: the first time t >= ``after`` at which fewer than ``beds_open[day of t]``
    entries of the row's ``releases`` are > t (+inf if none before the end of the window).
    ``after`` is in the window and occupancy at ``after`` is at or above the beds open.

    Within a day the beds open are fixed and occupancy only falls (at discharges), so the time
    is either 00:00 of the day or the discharge that brings occupancy below the beds open."""
    days = beds_open.size
    width = releases.shape[1]
    ordered = np.sort(releases, axis=1)
    found = np.full(after.size, np.inf)
    day = _day(after, days)
    pending = np.arange(after.size)
    while pending.size:
        rows = ordered[pending]
        from_hour = np.maximum(after[pending], HOURS_PER_DAY * day[pending])
        occupied = np.count_nonzero(rows > from_hour[:, None], axis=1)
        need = occupied - beds_open[day[pending]] + 1  # discharges needed after from_hour
        position = width - occupied + need - 1  # that discharge, in the sorted row
        discharge = np.take_along_axis(rows, np.minimum(position, width - 1)[:, None], 1)[:, 0]
        in_day = (position < width) & (discharge < HOURS_PER_DAY * (day[pending] + 1))
        now = need <= 0
        found[pending[now]] = from_hour[now]
        later = ~now & in_day
        found[pending[later]] = discharge[later]
        day[pending] += 1
        keep = ~now & ~in_day & (day[pending] < days)
        pending = pending[keep]
    return found


def _occupancy(releases, hours, busy, slots):
    """Occupied beds at ``hours`` (one per column of ``releases``, beds x paths) and the number
    of a free entry of each column (-1 if none). ``busy`` is scratch space of the same shape."""
    np.greater(releases, hours, out=busy)
    if busy.shape[0] < 256:
        occupied = np.add.reduce(busy.view(np.uint8), axis=0, dtype=np.uint8)
    else:
        occupied = np.add.reduce(busy, axis=0, dtype=np.int32)
    free_slot = np.max(np.where(busy, -1, slots), axis=0)
    return occupied.astype(np.int64), free_slot


def allocate_beds(
    arrival: np.ndarray,
    clock: np.ndarray,
    stay: np.ndarray,
    count: np.ndarray,
    remaining: np.ndarray,
    beds_open: np.ndarray,
    wait: bool,
) -> BedTimes:
    """Give beds to the arrivals of every path (times in hours since 00:00 of day 0).

    Per-patient arrays are (arrival slots x paths), paths ordered by decreasing ``count``
    (arrivals per path), so the paths still arriving at step k are a prefix. ``arrival``:
    exact arrival hours, sorted down each column, padded after ``count[i]`` values; ``clock``:
    the same times as the SimPy clock reads them; ``stay``: stay of each arrival, hours;
    ``remaining``: remaining stays of the current inpatients (paths x inpatients, hours);
    ``beds_open``: beds open on each day of the window; ``wait``: policy "wait" (True) or
    "divert". The result's arrays have the same (slots x paths) layout.
    """
    slots, paths = arrival.shape
    days = beds_open.size
    horizon = HOURS_PER_DAY * days
    inpatients = remaining.shape[1]
    width = max(int(beds_open.max()), inpatients, 1)
    constant = int(beds_open.min()) == width  # fixed beds, never more inpatients than beds
    if np.any(np.diff(count) > 0):
        raise ValueError("count: paths must be ordered by decreasing arrivals")
    active_paths = np.searchsorted(-count, -np.arange(slots), side="right")
    # Release times as (entries x paths): reductions over entries are then elementwise.
    releases = np.full((width, paths), -np.inf)
    releases[:inpatients] = remaining.T
    busy = np.empty((width, paths), dtype=bool)
    entry = np.arange(width, dtype=np.int16 if width < 2**15 else np.int64)[:, None]
    bed_hour = np.full((slots, paths), np.nan)
    released = np.full((slots, paths), np.inf)
    level = np.zeros((slots, paths), dtype=np.int64)
    waited = np.zeros((slots, paths), dtype=bool)
    diverted = np.zeros((slots, paths), dtype=bool)
    previous = np.full(paths, -np.inf)  # clock time the previous arrival took a bed
    for k in range(slots):
        m = int(active_paths[k])
        rows = releases[:, :m]
        now = clock[k, :m]
        start = after = np.maximum(now, previous[:m]) if wait else now
        inside = start < horizon
        occupied, free_slot = _occupancy(rows, start, busy[:, :m], entry)
        limit = beds_open[_day(np.where(inside, start, 0.0), days)]
        free = inside & (occupied < limit)
        if wait:
            queued = previous[:m] > now
            hard = np.flatnonzero(inside & ~free)
            start = np.where(free, start, np.inf)
            if hard.size:
                stuck = rows[:, hard]
                if constant:  # every bed is taken: the first discharge frees one
                    first = stuck.min(axis=0)
                else:
                    first = _earliest_bed(stuck.T, after[hard], beds_open)
                first = np.where(first < horizon, first, np.inf)
                start[hard] = first
                occupied[hard], free_slot[hard] = _occupancy(
                    stuck, first, np.empty(stuck.shape, dtype=bool), entry
                )
            taken = start < horizon
            immediate = free & ~queued
            bed_hour[k, :m] = np.where(immediate, arrival[k, :m], np.where(taken, start, np.nan))
            waited[k, :m] = ~immediate
            previous[:m] = start
        else:
            taken = free
            bed_hour[k, :m] = np.where(taken, arrival[k, :m], np.nan)
            diverted[k, :m] = ~taken
        given = np.flatnonzero(taken)
        out = start[given] + stay[k, given]
        rows[free_slot[given], given] = out
        released[k, given] = out
        level[k, given] = occupied[given] + 1
    return BedTimes(bed_hour, released, level, waited, diverted)

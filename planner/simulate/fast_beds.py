"""Bed allocation for many paths at once: the ward model's bed rules, vectorised across paths.

The k-th arrival of every path is handled in one step of numpy operations. Each path keeps
its bed release times (hours) as one column of a (width x paths) array, sorted up each column;
the width is the most beds open on any day, or the current inpatients if more, and entries at
or before the current time (free beds, -inf at first) stay at the top. Occupied beds at time t
= entries > t (patients discharged at t have left), so fewer than L beds are occupied at t
exactly when entry ``width - L`` of the sorted column is <= t. Times only move forward (arrival
times, and under "wait" the bed times of a first-come-first-served queue), so a patient who
takes a bed replaces the column's first entry, which is then past, and the new release time is
inserted in order. The rules are those of :mod:`planner.simulate.ward`:

- a patient gets a bed at time t only while occupied beds < beds open that day (so when beds
  close on a full ward nobody is moved, and nobody new comes in until occupancy is below the
  beds open);
- "divert": a patient who finds no free bed on arrival is placed elsewhere;
- "wait": first come, first served, so patient k takes a bed at the first time t >= max(arrival
  k, bed time of patient k-1) with occupied(t) < beds open(t); that is either that time itself,
  the discharge that brings occupancy below the beds open, or 00:00 of a later day on which
  more beds open.

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
    """Per patient (arrival slots x paths): ``bed_hour`` (hours; the end of the window if never
    in a bed in the window, and in unused slots), ``released`` (discharge hour on the SimPy
    clock; at or after the end of the window if never in a bed), ``level`` (occupied beds just
    after the patient took the bed), ``waited`` and ``diverted`` (bool; False in unused
    slots)."""

    bed_hour: np.ndarray
    released: np.ndarray
    level: np.ndarray
    waited: np.ndarray
    diverted: np.ndarray


def _day(hours: np.ndarray, days: int) -> np.ndarray:
    """Day index of finite hours in the window (clipped to the last day)."""
    return np.minimum((hours // HOURS_PER_DAY).astype(np.int64), days - 1)


def _threshold(rows: np.ndarray, limit: np.ndarray) -> np.ndarray:
    """Per column of sorted ``rows``: the entry that must be <= t for fewer than ``limit``
    beds to be occupied at t (+inf where ``limit`` is 0: never)."""
    width = rows.shape[0]
    entry = rows[np.clip(width - limit, 0, width - 1), np.arange(limit.size)]
    return np.where(limit > 0, entry, np.inf)


def _earliest_bed(rows, after, beds_open):
    """For each column of sorted ``rows``: the first time t >= ``after`` at which fewer than
    ``beds_open[day of t]`` entries are > t (+inf if none before the end of the window).

    Within a day the beds open are fixed and occupancy only falls, so the time is the later
    of the day's first moment (``after``, or 00:00) and the entry that must have passed."""
    days = beds_open.size
    found = np.full(after.size, np.inf)
    day = _day(after, days)
    pending = np.arange(after.size)
    while pending.size:
        today = day[pending]
        from_hour = np.maximum(after[pending], HOURS_PER_DAY * today)
        hour = np.maximum(from_hour, _threshold(rows[:, pending], beds_open[today]))
        now = hour < HOURS_PER_DAY * (today + 1)
        found[pending[now]] = hour[now]
        day[pending] += 1
        pending = pending[~now & (day[pending] < days)]
    return found


def _insert(rows, value, out):
    """Sorted columns of ``rows`` with the first entry replaced by ``value`` (>= that entry),
    written to ``out``: entry j becomes max(rows[j], min(rows[j + 1], value))."""
    np.minimum(rows[1:], value, out=out[:-1])
    np.maximum(rows[:-1], out[:-1], out=out[:-1])
    np.maximum(rows[-1], value, out=out[-1])


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
    exact arrival hours, sorted down each column (values after ``count[i]`` are not read);
    ``clock``: the same times as the SimPy clock reads them; ``stay``: stay of each arrival,
    hours; ``remaining``: remaining stays of the current inpatients (paths x inpatients,
    hours); ``beds_open``: beds open on each day of the window; ``wait``: policy "wait" (True)
    or "divert". The result's arrays have the same (slots x paths) layout.
    """
    slots, paths = arrival.shape
    days = beds_open.size
    horizon = HOURS_PER_DAY * days
    inpatients = remaining.shape[1]
    width = max(int(beds_open.max()), inpatients, 1)
    constant = int(beds_open.min()) == width  # fixed beds, never more inpatients than beds
    if np.any(np.diff(count) > 0):
        raise ValueError("count: paths must be ordered by decreasing arrivals")
    active_paths = np.searchsorted(-count, -np.arange(slots), side="left")  # count > k
    releases = np.full((width, paths), -np.inf)
    releases[width - inpatients :] = np.sort(remaining.T, axis=0)
    spare = np.empty_like(releases)
    busy = np.empty((width, paths), dtype=bool)
    small = width < 255
    bed_hour = np.full((slots, paths), horizon)
    released = np.full((slots, paths), horizon)
    level = np.zeros((slots, paths), dtype=np.int16 if width < 2**15 - 1 else np.int32)
    waited = np.zeros((slots, paths), dtype=bool)
    diverted = np.zeros((slots, paths), dtype=bool)
    previous = np.full(paths, -np.inf)  # clock time the previous arrival took a bed
    for k in range(slots):
        m = int(active_paths[k])
        rows, now = releases[:, :m], clock[k, :m]
        after = np.maximum(now, previous[:m]) if wait else now
        if constant:
            free_from = rows[0]
        else:
            inside = after < horizon
            limit = beds_open[_day(np.where(inside, after, 0.0), days)]
            free_from = np.where(inside, _threshold(rows, limit), np.inf)
        if wait:
            start = np.maximum(after, free_from)  # constant beds: the first discharge
            if not constant:
                hard = np.flatnonzero((after < horizon) & (free_from > after))
                start[hard] = _earliest_bed(rows[:, hard], after[hard], beds_open)
            immediate = start == now
            immediate &= start < horizon  # given a bed on arrival
            bed = np.minimum(start, horizon, out=bed_hour[k, :m])
            np.copyto(bed, arrival[k, :m], where=immediate)
            np.logical_not(immediate, out=waited[k, :m])
            previous = start  # the next step reads a prefix of it (fewer paths still arrive)
            out = np.add(start, stay[k, :m], out=released[k, :m])  # >= horizon if not taken
        else:
            start = now
            taken = (free_from <= now) & (now < horizon)
            bed_hour[k, :m] = np.where(taken, arrival[k, :m], horizon)
            np.logical_not(taken, out=diverted[k, :m])
            out = np.where(taken, now + stay[k, :m], rows[0])
            released[k, :m] = np.where(taken, out, horizon)
        np.greater(rows, start, out=busy[:, :m])
        occupied = np.add.reduce(busy[:, :m].view(np.uint8) if small else busy[:, :m], axis=0,
                                 dtype=np.uint8 if small else np.int32)  # fmt: skip
        np.add(occupied, 1, out=level[k, :m], casting="unsafe")
        _insert(rows, out, spare[:, :m])
        releases, spare = spare, releases
    return BedTimes(bed_hour, released, level, waited, diverted)

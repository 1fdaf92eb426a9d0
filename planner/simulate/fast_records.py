"""Daily and per-shift records of many simulated paths at once, from each patient's bed times.

Occupied beds are a step function: the current inpatients at 00:00 of day 0, +1 when a patient
takes a bed, -1 at each discharge before the end of the window. For a sequence of boundaries
b_0 < b_1 < ... (midnights, or shift starts), the level just before each boundary counts the
events before it; the peak of the interval [b_k, b_k+1) is the larger of the level just before
b_k and the highest level reached just after a patient took a bed inside the interval. These
are the definitions of :mod:`planner.simulate.ward` (events exactly at a boundary count in the
interval they start).

Midnights and shift starts together cut the window into pieces (``days x pieces per day``);
each event is counted in its piece once, and the daily and per-shift records are sums and
maxima over pieces. When every boundary is a multiple of 1/q hour for q a power of two up to
64 (whole hours, half hours, quarter hours, ...), an event's piece is read from a table
indexed by floor(q x hour), exactly; otherwise it is found by binary search on the boundaries.
"""

from __future__ import annotations

import numpy as np

from planner.simulate.fast_beds import HOURS_PER_DAY, BedTimes

#: Table steps tried, hours: 1, 1/2, ..., 1/64.
_STEPS = tuple(2**n for n in range(7))


class Pieces:
    """The pieces of a window of ``days`` days cut at midnights and at ``shift_starts``
    (hours of the day, sorted): boundaries ``bounds`` (hours, the end of the window last)."""

    def __init__(self, days: int, shift_starts: np.ndarray):
        self.days = days
        self.cuts = np.unique(np.concatenate([[0.0], shift_starts]))  # hours of the day
        self.per_day = self.cuts.size
        self.bounds = np.append(
            (HOURS_PER_DAY * np.arange(days)[:, None] + self.cuts).ravel(), HOURS_PER_DAY * days
        )
        self.count = self.bounds.size + 1  # piece i holds hours with i boundaries at or before
        self.shift_bounds = (
            np.searchsorted(self.cuts, shift_starts) + self.per_day * np.arange(days)[:, None]
        )
        self.step = next(
            (q for q in _STEPS if np.all(self.cuts * q == np.floor(self.cuts * q))), None
        )
        if self.step is not None:
            ticks = np.arange(int(HOURS_PER_DAY * days * self.step) + 1) / self.step
            self.table = np.searchsorted(self.bounds, ticks, side="right")

    def index(self, hours: np.ndarray, clip: bool = True) -> np.ndarray:
        """Piece of each hour: the number of boundaries at or before it (hours >= 0; those at
        or after the end of the window all get the last piece; ``clip=False`` when no hour
        is after the end)."""
        if clip:
            hours = np.minimum(hours, HOURS_PER_DAY * self.days)
        if self.step is None:
            return np.searchsorted(self.bounds, hours, side="right")
        return self.table[(hours * self.step if self.step != 1 else hours).astype(np.intp)]

    def by_day(self, values: np.ndarray) -> np.ndarray:
        """(paths, days, pieces per day) view of the window's pieces of (paths, pieces)."""
        inside = values[:, 1 : 1 + self.days * self.per_day]
        return inside.reshape(values.shape[0], self.days, self.per_day)


def _over_day(parts: np.ndarray, ufunc: np.ufunc) -> np.ndarray:
    """``ufunc`` (np.add or np.maximum) over the last, short axis of (paths, days, pieces)."""
    out = parts[..., 0].copy()
    for j in range(1, parts.shape[2]):
        ufunc(out, parts[..., j], out=out)
    return out


def _per_piece(paths: int, bins: int, piece: np.ndarray) -> np.ndarray:
    """(paths, bins) events per path and piece, from flat indices path x bins + piece."""
    return np.bincount(piece.ravel(), minlength=paths * bins).reshape(paths, bins)


def _shift_peaks(within: np.ndarray, first: np.ndarray, last: int) -> np.ndarray:
    """(paths, days, shifts) highest level reached after a bed was taken in each shift: shift
    j of day d covers pieces ``first[d, j] + 1`` to the next shift's start (``last``, the
    window's last piece, for the final one), a few pieces, so the maximum is taken one piece
    at a time (``np.maximum.reduceat`` over so many short segments is several times slower)."""
    following = np.append(first.ravel()[1:], last).reshape(first.shape)
    peaks = np.empty((within.shape[0], *first.shape), dtype=within.dtype)
    for j in range(first.shape[1]):
        peak = peaks[:, :, j]
        peak[...] = within[:, first[:, j] + 1]
        for extra in range(2, int((following[:, j] - first[:, j]).max()) + 1):
            # Shifts with fewer pieces (the last, cut at the window's end) repeat their last.
            np.maximum(peak, within[:, np.minimum(first[:, j] + extra, following[:, j])], out=peak)
    return peaks


def daily_records(
    times: BedTimes,
    arrival: np.ndarray,
    path_of_column: np.ndarray,
    counts: np.ndarray,
    remaining: np.ndarray,
    pieces: Pieces,
) -> tuple[dict[str, np.ndarray], np.ndarray]:
    """The daily measures of ``WardResult`` as (paths x days) arrays, and the peak occupancy
    of every shift (paths x days x shifts, shifts in the order of the starts given to
    ``pieces``), from the patients' bed times.

    ``times`` and ``arrival`` (exact arrival hours) are (arrival slots x columns), column j
    holding path ``path_of_column[j]``; ``counts``: admissions per path and day (paths in
    order); ``remaining``: remaining stays of current inpatients (paths in order x inpatients,
    hours). Sums of hours run over each path's patients in arrival order, as in the SimPy
    model, so they agree bit for bit.
    """
    paths, days = counts.shape
    bins, per_day = pieces.count, pieces.per_day
    started = pieces.index(times.bed_hour, clip=False)
    started += (path_of_column * bins)[None, :]
    starts = _per_piece(paths, bins, started)
    ended = pieces.index(times.released)
    ended += (path_of_column * bins)[None, :]
    ended_before = pieces.index(remaining)
    ended_before += (np.arange(paths) * bins)[:, None]
    ends = _per_piece(paths, bins, ended)
    ends += _per_piece(paths, bins, ended_before)
    within = np.full(paths * bins, -1, dtype=times.level.dtype)  # same dtypes: fast ufunc.at
    np.maximum.at(within, started.ravel(), times.level.ravel())
    within = within.reshape(paths, bins)

    slot, column = np.nonzero(times.waited)
    waited_path = path_of_column[column]
    waited_day = (arrival[slot, column] // HOURS_PER_DAY).astype(np.int64)
    hours_waited = times.bed_hour[slot, column] - arrival[slot, column]
    slot, column = np.nonzero(times.diverted) if times.diverted.any() else (slot[:0], column[:0])
    diverted_day = (arrival[slot, column] // HOURS_PER_DAY).astype(np.int64)

    def each_day(path, day, weights=None):
        flat = np.bincount(path * days + day, weights=weights, minlength=paths * days)
        return flat.reshape(paths, days)

    daily = {
        "admissions": counts,
        "bed_admissions": _over_day(pieces.by_day(starts), np.add),
        "discharges": _over_day(pieces.by_day(ends), np.add),
        "waited": each_day(waited_path, waited_day),
        "diverted": each_day(path_of_column[column], diverted_day),
        "wait_hours": each_day(waited_path, waited_day, weights=hours_waited),
    }
    # Patients who joined from the queue = bed admissions - those given a bed on arrival.
    joined = daily["bed_admissions"] - (counts - daily["waited"] - daily["diverted"])
    daily["queue"] = np.cumsum(daily["waited"] - joined, axis=1)
    # Level just before boundary i = inpatients + events in pieces 0..i.
    level = np.subtract(starts, ends, out=starts)
    np.cumsum(level, axis=1, out=level)
    level += remaining.shape[1]
    daily["census"] = level[:, per_day : per_day * days + 1 : per_day]
    midnight = level[:, 0 : per_day * days : per_day]
    daily["peak_occupancy"] = np.maximum(midnight, _over_day(pieces.by_day(within), np.maximum))
    shift_peak = _shift_peaks(within, pieces.shift_bounds, days * per_day)
    at_start = level[:, : days * per_day].reshape(paths, days, per_day)
    for j, position in enumerate(pieces.shift_bounds[0]):
        np.maximum(shift_peak[..., j], at_start[..., position], out=shift_peak[..., j])
    return daily, shift_peak

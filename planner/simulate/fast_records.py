"""Daily and per-shift records of many simulated paths at once, from each patient's bed times.

Occupied beds are a step function: the current inpatients at 00:00 of day 0, +1 when a patient
takes a bed, -1 at each discharge before the end of the window. For a sequence of boundaries
b_0 < b_1 < ... (midnights, or shift starts), the level just before each boundary counts the
events before it; the peak of the interval [b_k, b_k+1) is the larger of the level just before
b_k and the highest level reached just after a patient took a bed inside the interval. These
are the definitions of :mod:`planner.simulate.ward` (events exactly at a boundary count in the
interval they start), computed without sorting any path's events.
"""

from __future__ import annotations

import numpy as np

from planner.simulate.fast_beds import HOURS_PER_DAY, BedTimes


def _per_path_counts(paths: int, bins: int, path: np.ndarray, where: np.ndarray, weights=None):
    """(paths, bins) totals of events of ``path`` falling in bin ``where``, summed in the
    order given (so sums of hours match a per-path loop bit for bit)."""
    flat = np.bincount(path * bins + where, weights=weights, minlength=paths * bins)
    return flat.reshape(paths, bins)


def levels_and_peaks(
    paths: int,
    inpatients: int,
    start_path: np.ndarray,
    started: np.ndarray,
    start_level: np.ndarray,
    end_path: np.ndarray,
    ended: np.ndarray,
    count: int,
) -> tuple[np.ndarray, np.ndarray]:
    """Occupied beds just before each of ``count`` boundaries (paths x count) and the peak in
    each interval between them (paths x count - 1), patients.

    ``start_*``: path, number of boundaries at or before the hour, and occupied beds just after
    each patient took a bed; ``end_*``: path and number of boundaries at or before the hour of
    each discharge (discharges at or after the last boundary are not counted)."""
    before = np.cumsum(
        _per_path_counts(paths, count + 1, start_path, started)
        - _per_path_counts(paths, count + 1, end_path, ended),
        axis=1,
    )[:, :count]
    level = inpatients + before
    within = np.full(paths * (count - 1), -1, dtype=np.int64)
    inside = (started >= 1) & (started < count)
    np.maximum.at(
        within, start_path[inside] * (count - 1) + started[inside] - 1, start_level[inside]
    )
    peak = np.maximum(level[:, :-1], within.reshape(paths, count - 1))
    return level, peak


def _interval_of_day(hours: np.ndarray, days: int) -> np.ndarray:
    """Midnights 0, 24, ..., 24 days at or before each hour >= 0 (``searchsorted(..., "right")``
    on the midnights, exactly: floor division of floats is exact)."""
    return np.minimum(hours // HOURS_PER_DAY + 1, days + 1).astype(np.int64)


def daily_records(
    times: BedTimes,
    arrival: np.ndarray,
    path_of_column: np.ndarray,
    counts: np.ndarray,
    remaining: np.ndarray,
    beds_open: np.ndarray,
    shift_bounds: np.ndarray,
) -> tuple[dict[str, np.ndarray], np.ndarray]:
    """The daily columns of ``WardResult.daily`` as (paths x days) arrays, and the peak
    occupancy of every shift interval (paths x intervals), from the patients' bed times.

    ``times`` and ``arrival`` (exact arrival hours) are (arrival slots x columns), column j
    holding path ``path_of_column[j]``; ``counts``: admissions per path and day (paths in
    order); ``remaining``: remaining stays of current inpatients (paths in order x inpatients,
    hours). Sums of hours run over each path's patients in arrival order, as in the SimPy
    model, so they agree bit for bit.
    """
    paths, days = counts.shape
    horizon = HOURS_PER_DAY * days
    totals = counts.sum(axis=1)[path_of_column]
    used = np.arange(arrival.shape[0])[:, None] < totals[None, :]
    path = path_of_column[np.nonzero(used)[1]]
    hours = arrival[used]
    arrival_day = (hours // HOURS_PER_DAY).astype(np.int64)  # exact: arrivals of day d < 24(d+1)

    def day_of(values):
        return np.minimum((values // HOURS_PER_DAY).astype(np.int64), days - 1)

    bed_hour = times.bed_hour[used]
    in_bed = ~np.isnan(bed_hour)
    waited = times.waited[used]
    diverted = times.diverted[used]
    from_queue = waited & in_bed
    released = times.released[used]
    out = released < horizon
    end_hour = np.concatenate([remaining.ravel(), released[out]])
    end_path = np.concatenate([np.repeat(np.arange(paths), remaining.shape[1]), path[out]])
    end_path, end_hour = end_path[end_hour < horizon], end_hour[end_hour < horizon]
    hours_waited = np.where(in_bed, bed_hour, horizon)[waited] - hours[waited]
    start_path, start_hour = path[in_bed], bed_hour[in_bed]
    start_day = day_of(start_hour)

    daily = {
        "admissions": counts.astype(np.float64),
        "bed_admissions": _per_path_counts(paths, days, start_path, start_day),
        "discharges": _per_path_counts(paths, days, end_path, day_of(end_hour)),
        "waited": _per_path_counts(paths, days, path[waited], arrival_day[waited]),
        "diverted": _per_path_counts(paths, days, path[diverted], arrival_day[diverted]),
        "wait_hours": _per_path_counts(
            paths, days, path[waited], arrival_day[waited], weights=hours_waited
        ),
    }
    joined = _per_path_counts(paths, days, path[from_queue], day_of(bed_hour[from_queue]))
    daily["queue"] = np.cumsum(daily["waited"], axis=1) - np.cumsum(joined, axis=1)
    daily["beds_open"] = np.broadcast_to(beds_open, (paths, days))
    start_level = times.level[used][in_bed]
    inpatients = remaining.shape[1]
    level, peak = levels_and_peaks(
        paths, inpatients, start_path, _interval_of_day(start_hour, days), start_level,
        end_path, _interval_of_day(end_hour, days), days + 1,
    )  # fmt: skip
    daily["census"], daily["peak_occupancy"] = level[:, 1:], peak
    _, shift_peak = levels_and_peaks(
        paths, inpatients, start_path, np.searchsorted(shift_bounds, start_hour, side="right"),
        start_level, end_path, np.searchsorted(shift_bounds, end_hour, side="right"),
        shift_bounds.size,
    )  # fmt: skip
    return daily, shift_peak

"""Discharge times drawn from a fitted discharge timing (:mod:`planner.simulate.discharge_fit`),
shared by both engines.

A patient who takes a bed at hour ``t`` (hours since 00:00 of the first simulated day) is on
day of stay 0 on simulated day A = floor(t / 24), whose weekday is w. The day of stay k of the
discharge inverts the survival function S_w(k) = P(still on the ward at the end of day of stay
k) with one uniform u: k is the least k with S_w(k) < 1 - u. A patient already on the ward when
the simulation starts, on day of stay j, draws from the same function conditioned on staying
past day j - 1: the least k >= j with S_w(k) < (1 - u) S_w(j - 1).

The clock time x of the discharge (hours into the day, continuous) inverts the discharge day's
hour profile read as a density that is even within each hour, with a second uniform v. On the
day the bed was taken (k = 0) the discharge must follow the bed time x0: x inverts the profile
conditioned on x > x0, and, when the profile holds nothing after x0, x is spread evenly over
the rest of the day. The hazard of day 0 is thus the fitted share of patients who leave on the
day they came whatever the hour; it is not lowered for a late admission.

The discharge is at 24 (A + k) + x. :class:`DischargeTables` holds S_w(k) for days of stay 0 to
K + 6 (K the first pooled day); later days repeat the pooled week: S_w(K + j + 7 q) =
S_w(K + j) r^q with r the chance of staying through a pooled week, so the search beyond the
table is in closed form. For a new patient the day of stay within the table is read as the
number of entries of 1 - S_w(k) at or below u, and the hour of a discharge not bound by a bed
time as the number of the weekday's cumulative hour shares at or below v, both from bucket
tables (:class:`planner.simulate.lookup.UnitSearch`) in one read for most uniforms.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass

import numpy as np

from planner.simulate.compiled import compiled, compiled_inline
from planner.simulate.discharge_fit import DAYS_PER_WEEK, HOURS_PER_DAY, DischargeTiming
from planner.simulate.lookup import UnitSearch

#: The last moment of a day, hours: a discharge drawn at 24:00 is kept in its own day.
LAST_HOUR = float(np.nextafter(24.0, 0.0))
#: Cumulative shares closer than this to 1 count as nothing left after a bed time.
NOTHING_LEFT = 1e-12
#: Buckets of the tables that give the day of stay and the hour for a uniform in one read.
BUCKET_BITS = 10


@dataclass(frozen=True, eq=False)
class DischargeTables:
    """What the compiled draws read. ``survival``: (7, K + 7) S_w(k) for admission weekday w
    (0 = Monday) and days of stay 0..K+6; ``week_stay``: r, the chance of staying through a
    pooled week; ``hour_cdf``: (7, 25) cumulative share of a weekday's discharges before each
    hour 0..24; ``first_weekday``: the weekday of simulated day 0; ``day_table`` and
    ``hour_table``: (7, buckets) for each bucket of uniforms, the number of entries of
    1 - S_w and of ``hour_cdf[w, 1:]`` at or below every uniform in it, or -1 where that
    changes inside the bucket."""

    survival: np.ndarray
    week_stay: float
    hour_cdf: np.ndarray
    first_weekday: int
    day_table: np.ndarray
    hour_table: np.ndarray

    @classmethod
    def build(cls, timing: DischargeTiming, first_weekday: int) -> DischargeTables:
        top = timing.pooled_from
        survival = np.array(
            [timing.survival_days(w, top + DAYS_PER_WEEK) for w in range(DAYS_PER_WEEK)]
        )
        week_stay = float(np.prod(1.0 - timing.hazard(top, np.arange(DAYS_PER_WEEK))))
        profile = timing.hour_profile / timing.hour_profile.sum(axis=1, keepdims=True)
        hour_cdf = np.zeros((DAYS_PER_WEEK, HOURS_PER_DAY + 1))
        hour_cdf[:, 1:] = np.cumsum(profile, axis=1)
        hour_cdf[:, -1] = 1.0
        day_table = np.array([_buckets(1.0 - row) for row in survival])
        hour_table = np.array([_buckets(row[1:]) for row in hour_cdf])
        return cls(survival, week_stay, hour_cdf, int(first_weekday), day_table, hour_table)

    def arrays(self):
        """The tables as the compiled draws take them."""
        return (self.survival, np.float64(self.week_stay), self.hour_cdf,
                np.int64(self.first_weekday), self.day_table, self.hour_table)  # fmt: skip


@functools.lru_cache(maxsize=16)
def tables_for(timing: DischargeTiming, first_weekday: int) -> DischargeTables:
    """The tables of ``timing`` for a simulation starting on ``first_weekday``, built once
    for the sampling and the engines of a block (timings compare by identity)."""
    return DischargeTables.build(timing, first_weekday)


def _buckets(cumulative: np.ndarray) -> np.ndarray:
    """For each bucket of uniforms in [0, 1): the number of ``cumulative`` entries at or below
    every uniform in it, or -1 where that changes inside the bucket."""
    return UnitSearch(cumulative, "right", bits=BUCKET_BITS).table[:-1]


@compiled_inline
def _survival(survival, week_stay, w, k):  # pragma: no cover - compiled
    """S_w(k) for any day of stay k >= -1 (S_w(-1) = 1)."""
    if k < 0:
        return 1.0
    size = survival.shape[1]
    if k < size:
        return survival[w, k]
    top = size - DAYS_PER_WEEK
    weeks = (k - top) // DAYS_PER_WEEK
    return survival[w, k - DAYS_PER_WEEK * weeks] * week_stay**weeks


@compiled
def discharge_day(survival, week_stay, w, first, u):  # pragma: no cover - compiled
    """The day of stay of the discharge, >= ``first``, for admission weekday ``w`` and the
    uniform ``u`` in [0, 1) (module docstring)."""
    target = (1.0 - u) * _survival(survival, week_stay, w, first - 1)
    if target <= 0.0:  # S underflows: leaves on the first day it can
        return first
    size = survival.shape[1]
    if first < size and survival[w, size - 1] < target:  # within the table
        low, high = first, size - 1
        while low < high:  # least k in [first, size - 1] with S < target
            middle = (low + high) // 2
            if survival[w, middle] < target:
                high = middle
            else:
                low = middle + 1
        return low
    top = size - DAYS_PER_WEEK
    best = -1
    for j in range(DAYS_PER_WEEK):  # the least k = top + j + 7 q past the table, for each j
        level = survival[w, top + j]  # >= target: every day of the table is
        if week_stay >= 1.0:
            continue
        weeks = 1
        if week_stay > 0.0 and level > 0.0:
            weeks = max(int(np.floor(np.log(target / level) / np.log(week_stay))) + 1, 1)
            while weeks > 1 and level * week_stay ** (weeks - 1) < target:  # rounding
                weeks -= 1
            while level * week_stay**weeks >= target:
                weeks += 1
        k = top + j + DAYS_PER_WEEK * weeks
        if best < 0 or k < best:
            best = k
    return best if best >= 0 else first + 100 * 365  # nobody ever leaves: a century


@compiled_inline
def clock_time(hour_cdf, weekday, after, v):  # pragma: no cover - compiled
    """Hours into the day of a discharge on ``weekday`` after hour ``after`` (0 for any time of
    the day), from the uniform ``v`` in [0, 1) (module docstring)."""
    cdf = hour_cdf[weekday]
    hour = min(int(after), HOURS_PER_DAY - 1)
    done = cdf[hour] + (after - hour) * (cdf[hour + 1] - cdf[hour])
    if 1.0 - done <= NOTHING_LEFT:
        return min(after + v * (24.0 - after), LAST_HOUR)
    target = done + v * (1.0 - done)
    low, high = 0, HOURS_PER_DAY - 1
    while low < high:  # the hour h with cdf[h] <= target < cdf[h + 1]
        middle = (low + high + 1) // 2
        if cdf[middle] <= target:
            low = middle
        else:
            high = middle - 1
    share = cdf[low + 1] - cdf[low]
    x = low + ((target - cdf[low]) / share if share > 0.0 else 0.0)
    return min(max(x, after), LAST_HOUR)


@compiled_inline
def _new_day(survival, week_stay, day_table, w, u):  # pragma: no cover - compiled
    """The day of stay of a new patient's discharge: the number of entries of 1 - S_w at or
    below ``u`` within the table (one read for most u), else past it as
    :func:`discharge_day`."""
    k = day_table[w, int(u * day_table.shape[1])]
    size = survival.shape[1]
    if k < 0:  # the bucket holds a step: count exactly
        low, high = 0, size
        while low < high:
            middle = (low + high) // 2
            if 1.0 - survival[w, middle] <= u:
                low = middle + 1
            else:
                high = middle
        k = low
    if k >= size:
        return discharge_day(survival, week_stay, w, 0, u)
    return k


@compiled_inline
def discharge_at(bed_hour, u, v, tables):  # pragma: no cover - compiled
    """Hour of the discharge of a patient who took a bed at ``bed_hour``, from the uniforms
    ``u`` (day of stay) and ``v`` (clock time); ``tables`` from
    :meth:`DischargeTables.arrays`."""
    survival, week_stay, hour_cdf, first_weekday, day_table, hour_table = tables
    day = int(np.floor(bed_hour / 24.0))
    w = (first_weekday + day) % DAYS_PER_WEEK
    k = _new_day(survival, week_stay, day_table, w, u)
    weekday = (w + k) % DAYS_PER_WEEK
    if k == 0:
        return 24.0 * day + clock_time(hour_cdf, weekday, bed_hour - 24.0 * day, v)
    hour = hour_table[weekday, int(v * hour_table.shape[1])]
    if hour < 0:
        return 24.0 * (day + k) + clock_time(hour_cdf, weekday, 0.0, v)
    low, high = hour_cdf[weekday, hour], hour_cdf[weekday, hour + 1]
    x = hour + (v - low) / (high - low)
    return 24.0 * (day + k) + min(x, LAST_HOUR)


@compiled
def _remaining_hours(elapsed, u, v, tables, out):  # pragma: no cover - compiled
    survival, week_stay, hour_cdf, first_weekday = tables[:4]
    for i in range(elapsed.size):
        admitted = -24.0 * elapsed[i]
        day = int(np.floor(admitted / 24.0))
        w = (first_weekday + day) % DAYS_PER_WEEK
        k = discharge_day(survival, week_stay, w, -day, u[i])
        after = admitted - 24.0 * day if k == 0 else 0.0
        x = clock_time(hour_cdf, (w + k) % DAYS_PER_WEEK, after, v[i])
        out[i] = 24.0 * (day + k) + x


def remaining_days(tables: DischargeTables, elapsed, u, v) -> np.ndarray:
    """Days from the start (00:00 of simulated day 0) to the discharge of patients already on
    the ward for ``elapsed`` days, from their uniforms ``u`` (day of stay) and ``v`` (clock
    time), each in [0, 1) and of the same shape."""
    elapsed = np.ascontiguousarray(elapsed, dtype=float)
    out = np.empty(elapsed.size)
    _remaining_hours(elapsed.ravel(), np.ravel(u), np.ravel(v), tables.arrays(), out)
    return (out / 24.0).reshape(elapsed.shape)


@compiled
def _discharge_hours(bed_hours, u, v, tables, out):  # pragma: no cover - compiled
    for i in range(bed_hours.size):
        out[i] = discharge_at(bed_hours[i], u[i], v[i], tables)


def discharge_hours(tables: DischargeTables, bed_hours, u, v) -> np.ndarray:
    """Hours of discharge of patients who took beds at ``bed_hours`` (hours since the start),
    from their uniforms ``u`` and ``v`` (arrays of the same shape)."""
    bed_hours = np.ascontiguousarray(bed_hours, dtype=float)
    out = np.empty(bed_hours.size)
    _discharge_hours(bed_hours.ravel(), np.ravel(u), np.ravel(v), tables.arrays(), out)
    return out.reshape(bed_hours.shape)

"""Arrival timing: when in the day each forecast admission reaches the ward.

Times are hours since 00:00 of day 0 of the horizon (float): an admission on day d at
hour-of-day h arrives at d * 24 + h. The hour of day is drawn from ``hour_profile`` (the share
of past admissions by hour, 24 values) and the time within the hour uniformly.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from planner.errors import PlannerError

HOURS_PER_DAY = 24


def hour_profile(admitted_at: pd.Series | None) -> np.ndarray:
    """Share of admissions by hour of day: 24 probabilities (hours 0..23) summing to 1.

    ``admitted_at``: admission date-times (datetime64, time zone or not; hours are read as
    given); missing values are ignored. None, empty or all missing gives the uniform profile
    (1/24 each).
    """
    if admitted_at is None:
        return np.full(HOURS_PER_DAY, 1 / HOURS_PER_DAY)
    times = pd.Series(admitted_at)
    if times.dropna().empty:
        return np.full(HOURS_PER_DAY, 1 / HOURS_PER_DAY)
    if not pd.api.types.is_datetime64_any_dtype(times):
        raise PlannerError(f"admitted_at: need date-times, got values of type {times.dtype}")
    times = times.dropna()
    counts = np.bincount(times.dt.hour.to_numpy(), minlength=HOURS_PER_DAY)
    return counts / counts.sum()


def _check_profile(profile: np.ndarray) -> np.ndarray:
    p = np.asarray(profile, dtype=float)
    if p.shape != (HOURS_PER_DAY,) or not np.all(np.isfinite(p)) or np.any(p < 0):
        raise PlannerError("profile: need 24 hour-of-day shares, each a finite number >= 0")
    if abs(p.sum() - 1) > 1e-6:  # rounding in a hand-written profile is renormalised
        raise PlannerError(f"profile: hour-of-day shares must sum to 1, got {p.sum():.12g}")
    return p / p.sum()


def _check_counts(counts: np.ndarray) -> np.ndarray:
    c = np.asarray(counts)
    if c.ndim != 1:
        raise PlannerError("counts: need one admissions count per day (a 1-D array)")
    if c.size and (not np.all(np.isfinite(c)) or np.any(c < 0) or np.any(c != np.round(c))):
        raise PlannerError("counts: admissions per day must be whole numbers >= 0")
    return c.astype(np.int64)


def arrival_times(rng: np.random.Generator, counts: np.ndarray, profile: np.ndarray) -> np.ndarray:
    """Sorted arrival times (hours since 00:00 of day 0) of ``counts[d]`` admissions on each
    day d of one path: d * 24 + an hour drawn from ``profile`` + a uniform time within the hour.

    Every admission of day d falls in [24 d, 24 d + 24), so the count per day is kept exactly.
    """
    p = _check_profile(profile)
    c = _check_counts(counts)
    day = np.repeat(np.arange(c.size), c)
    hour = rng.choice(HOURS_PER_DAY, size=day.size, p=p)
    within = rng.random(day.size)
    # Never let rounding carry an arrival into the next day: d*24 + 23 + within < d*24 + 24.
    times = np.minimum(day * HOURS_PER_DAY + hour + within, np.nextafter((day + 1) * 24.0, 0))
    return np.sort(times)

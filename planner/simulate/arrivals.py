"""Arrival timing: the share of a day's admissions in each hour, learned from the records.

Times are hours since 00:00 of day 0 of the horizon (float): an admission on day d at
hour-of-day h arrives at d * 24 + h. The hour of day is drawn from ``hour_profile`` and the time
within the hour uniformly, by :mod:`planner.simulate.sampling`.
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

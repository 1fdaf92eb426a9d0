"""Seasonal naive benchmark: each day is forecast by the same weekday of the last observed week.

Point forecast for day ``h`` (1-based) after a history ``y[0..n-1]``: ``y[n - 7 + (h-1) mod 7]``.
Its uncertainty comes from its own empirical errors: for every origin ``t`` in the history
(``7 <= t <= n - H``) the whole vector of errors ``y[t+h-1] - y[t - 7 + (h-1) mod 7]``,
``h = 1 .. H``, is one error path. Paths add one drawn error path to the point forecast, like the
direct strategy. The errors are not centred: a naive method's bias is part of its error.
"""

from __future__ import annotations

import numpy as np

from planner.errors import PlannerError

WEEK = 7


def seasonal_naive_point(values, horizon: int) -> np.ndarray:
    """``(H,)`` same-weekday-last-week forecast (admissions per day)."""
    values = np.asarray(values, dtype=float)
    if values.shape[0] < WEEK:
        raise PlannerError(f"history: seasonal naive needs at least {WEEK} days")
    return values[values.shape[0] - WEEK + np.arange(horizon) % WEEK]


def seasonal_naive_errors(values, horizon: int) -> np.ndarray:
    """``(origins, H)`` empirical error paths of the seasonal naive forecast on the history."""
    values = np.asarray(values, dtype=float)
    origins = np.arange(WEEK, values.shape[0] - horizon + 1)
    if origins.shape[0] < 1:
        raise PlannerError(
            f"history: {values.shape[0]} days are too few for seasonal naive errors at "
            f"horizon {horizon}"
        )
    steps = np.arange(horizon)
    actual = values[origins[:, None] + steps[None, :]]
    forecast = values[origins[:, None] - WEEK + (steps % WEEK)[None, :]]
    return actual - forecast

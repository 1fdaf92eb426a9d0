"""Sliding-window lag matrices for autoregressive fits.

For a daily series ``y`` (admissions per day), ``p`` lags and a horizon ``h`` (days), row ``t``
of the lag matrix holds the values known at the start of day ``t``, ``y[t-1], ..., y[t-p]``, and
its target is the value ``h`` days later, ``y[t+h-1]``. ``h = 1`` is the one-step regression of
the recursive strategy; ``h > 1`` are the regressions of the direct strategy.

Rows start at ``t = hold_back`` (default ``p``, the first row with all lags known) and end at the
last row whose target is observed, ``t = n - h``. A ``hold_back`` larger than ``p`` lets models of
different orders share one estimation sample, which is what makes their information criteria
comparable.
"""

from __future__ import annotations

import numpy as np

from planner.errors import PlannerError


def row_positions(n: int, lags: int, horizon: int = 1, hold_back: int | None = None) -> np.ndarray:
    """Positions ``t`` (0-based days) of the rows of :func:`lag_matrix` for a series of length
    ``n``: ``hold_back, ..., n - horizon``. The target of row ``t`` sits at ``t + horizon - 1``."""
    if lags < 0:
        raise PlannerError(f"lags must be >= 0, got {lags}")
    if horizon < 1:
        raise PlannerError(f"horizon must be >= 1 day, got {horizon}")
    start = lags if hold_back is None else hold_back
    if start < lags:
        raise PlannerError(f"hold_back must be >= lags ({lags}), got {start}")
    return np.arange(start, n - horizon + 1)


def lag_matrix(
    series, lags: int, horizon: int = 1, hold_back: int | None = None
) -> tuple[np.ndarray, np.ndarray]:
    """Return ``(X, y)``: ``X[i, j] = series[t_i - 1 - j]`` (lag ``j + 1``) and
    ``y[i] = series[t_i + horizon - 1]`` for the rows ``t_i`` of :func:`row_positions`.

    ``X`` has shape ``(rows, lags)``; with ``lags = 0`` it has no columns.

    >>> X, y = lag_matrix([1.0, 2.0, 3.0, 4.0], lags=2)
    >>> X.tolist(), y.tolist()
    ([[2.0, 1.0], [3.0, 2.0]], [3.0, 4.0])
    """
    values = np.asarray(series, dtype=float)
    if values.ndim != 1:
        raise PlannerError(f"series must be one-dimensional, got shape {values.shape}")
    rows = row_positions(values.shape[0], lags, horizon, hold_back)
    X = values[rows[:, None] - np.arange(1, lags + 1)[None, :]]
    return X.reshape(rows.shape[0], lags), values[rows + horizon - 1]

"""Multi-step forecasting strategies for the AR model of daily admissions.

- Recursive: the one-step model is iterated; each day's prediction is fed back as a lag of the
  next day (:func:`simulate_recursive` with zero shocks gives the point forecast; with shocks
  it gives sample paths).
- Direct: one regression per horizon ``h = 1 .. H`` of ``y[t+h-1]`` on ``y[t-1..t-p]`` and the
  deterministic terms of the target day, each fitted on all rows where ``y[t+h-1]`` is known.
  All horizons use the order ``p`` chosen for the one-step model (one order choice, not H), so
  the two strategies differ only in how the horizon is reached. The H regressions are solved
  together (:mod:`planner.forecast.direct_fit`).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from planner.errors import PlannerError
from planner.forecast.ar import ArFit
from planner.forecast.direct_fit import direct_regressions
from planner.forecast.spread import level_scale


@dataclass(frozen=True)
class DirectFit:
    """The H direct regressions: row ``h - 1`` of ``coefficients`` (deterministic terms, then
    ``lag_1 .. lag_order``) forecasts ``h`` days ahead, and row ``h - 1`` of ``residuals`` holds
    that regression's residuals (admissions) from the origin ``t = order`` on, zeros past its
    last row."""

    order: int
    coefficients: np.ndarray
    residuals: np.ndarray

    @property
    def horizon(self) -> int:
        return self.coefficients.shape[0]

    def aligned_residuals(self) -> np.ndarray:
        """Residuals of all H regressions on their common origins: row ``i`` is the origin
        ``t = order + i`` and column ``h - 1`` its ``h``-day-ahead residual (admissions), so a
        row is one realised error path ``h = 1 .. H``. Shape ``(n - H - order + 1, H)``."""
        return np.ascontiguousarray(
            self.residuals[:, : self.residuals.shape[1] - self.horizon + 1].T
        )


def simulate_recursive(
    lag_coefficients: np.ndarray,
    deterministic_coefficients: np.ndarray,
    last_values: np.ndarray,
    future_deterministic: np.ndarray,
    shocks: np.ndarray,
    scaled: bool = False,
) -> np.ndarray:
    """Iterate the one-step model over the horizon for many paths at once.

    ``lag_coefficients``: ``(p,)`` or ``(paths, p)``; ``deterministic_coefficients``: ``(k,)`` or
    ``(paths, k)``; ``last_values``: the last ``p`` observed days, oldest first;
    ``future_deterministic``: ``(H, k)`` regressors of the forecast days; ``shocks``:
    ``(paths, H)`` errors added on each day before the value is fed back; with ``scaled``
    they are standardised residuals, multiplied by the square root of the path's expected
    value of the day (:func:`planner.forecast.spread.level_scale`) before they are added.
    Returns ``(paths, H)`` admissions per day (continuous scale).
    """
    shocks = np.asarray(shocks, dtype=float)
    n_paths, horizon = shocks.shape
    lag_coefficients = np.asarray(lag_coefficients, dtype=float)
    order = lag_coefficients.shape[-1]
    lag_coefficients = np.broadcast_to(lag_coefficients, (n_paths, order))
    last_values = np.asarray(last_values, dtype=float)
    last_values = last_values[len(last_values) - order :]
    beta = np.asarray(deterministic_coefficients, dtype=float)
    level = future_deterministic @ beta.T  # (H,) or (H, paths)
    level = np.broadcast_to(level.T if level.ndim == 2 else level, (n_paths, horizon))
    buffer = np.empty((n_paths, order + horizon))
    buffer[:, :order] = last_values
    reversed_coefficients = lag_coefficients[:, ::-1]  # multiplies y[t-p] .. y[t-1]
    for day in range(horizon):
        window = buffer[:, day : day + order]
        autoregressive = np.einsum("ij,ij->i", window, reversed_coefficients) if order else 0.0
        expected = level[:, day] + autoregressive
        shock = shocks[:, day] * level_scale(expected) if scaled else shocks[:, day]
        buffer[:, order + day] = expected + shock
    return buffer[:, order:]


def recursive_point(fit: ArFit, last_values, future_deterministic) -> np.ndarray:
    """Recursive point forecast (admissions per day), shape ``(H,)``."""
    horizon = future_deterministic.shape[0]
    return simulate_recursive(
        fit.lag_coefficients,
        fit.deterministic_coefficients,
        _last(last_values, fit.order),
        future_deterministic,
        np.zeros((1, horizon)),
    )[0]


def fit_direct(
    values, order: int, horizon: int, deterministic: np.ndarray | None = None
) -> DirectFit:
    """Fit the direct regressions for ``h = 1 .. horizon`` at one common ``order``, solved
    together (:func:`planner.forecast.direct_fit.direct_regressions`)."""
    values = np.asarray(values, dtype=float)
    if len(values) - order - horizon + 1 < 2:
        raise PlannerError(
            f"history: {len(values)} days are too few for order {order} and horizon {horizon}"
        )
    return DirectFit(order, *direct_regressions(values, order, horizon, deterministic))


def direct_point(direct: DirectFit, last_values, future_deterministic) -> np.ndarray:
    """Direct point forecast: regression ``h`` applied to the last ``p`` observed days and the
    regressors of forecast day ``h``. Shape ``(H,)``."""
    if future_deterministic.shape[0] != direct.horizon:
        raise PlannerError(
            f"horizon: direct fit covers {direct.horizon} days, asked for "
            f"{future_deterministic.shape[0]}"
        )
    lags = _last(last_values, direct.order)[::-1]  # y[t-1], ..., y[t-p]
    k_det = direct.coefficients.shape[1] - direct.order
    deterministic = np.einsum(
        "hk,hk->h", future_deterministic, direct.coefficients[:, :k_det], optimize=False
    )
    return deterministic + direct.coefficients[:, k_det:] @ lags


def _last(values, order: int) -> np.ndarray:
    values = np.asarray(values, dtype=float)
    return values[len(values) - order :] if order else values[:0]

"""The direct strategy's H regressions, solved together.

Regression ``h`` (``h = 1 .. H``) is the one :func:`planner.forecast.ar.fit_ar` fits with
``horizon=h, hold_back=p``: target ``y[t+h-1]``, regressors the deterministic terms of the target
day and the lags ``y[t-1] .. y[t-p]``, rows ``t = p .. n-h``. With ``L`` the lag rows of
``h = 1`` (``M = n - p`` rows) and ``D`` the deterministic rows, its design is
``X_h = [D[p+h-1 : n], L[: M-h+1]]``: the lag block loses its last row and the deterministic
block its first row from one horizon to the next. So the normal equations of all H share
their pieces, and are built without H products of the whole design:

* ``L_h'L_h`` and ``D_h'D_h``: the Gram matrix of the fewest rows (h = H) once, then one
  outer product added per horizon;
* ``D_h'L_h``: one small product per horizon, in one batched call (the two blocks are paired
  at a shift of h-1, read through a strided view of ``D`` without copying it);
* ``X_h'y_h`` and, in the refinement, ``X_h'r_h``: two products of ``D`` and ``L`` with a
  matrix holding each horizon's targets (residuals) in one row, at their days.

They are solved batched, then refined once (``b += G^-1 X'(y - X b)``) as
:func:`planner.forecast.ar.least_squares` does, with the same safeguard: a horizon whose
refinement moves its coefficients by more than 1e-10 of their size is fitted alone by
:func:`~planner.forecast.ar.fit_ar` (the SVD solution for ill-conditioned designs), and every
horizon is when the normal equations of one are not positive definite (a singular design).

Coefficients and residuals agree with H separate :func:`~planner.forecast.ar.fit_ar` fits
within rounding (about 1e-15 relative on the demo), in about a third of their time at 91
horizons (``benchmarks/forecast.py``). The sums run in another order than theirs, so the
last digits may differ; the forecast and backtest CSVs, made of whole admissions, are
unchanged.
"""

from __future__ import annotations

import numpy as np
from numpy.lib.stride_tricks import as_strided, sliding_window_view

from planner.errors import PlannerError
from planner.forecast.ar import REFINED_WITHIN, constant_only, fit_ar
from planner.forecast.lags import lag_matrix


def direct_regressions(
    values: np.ndarray, order: int, horizon: int, deterministic: np.ndarray | None = None
) -> tuple[np.ndarray, np.ndarray]:
    """OLS of the H direct regressions: ``coefficients`` ``(H, k)`` (deterministic terms, then
    ``lag_1 .. lag_p``, as :class:`planner.forecast.ar.ArFit`) and ``residuals`` ``(H, M)``:
    row ``h - 1`` holds regression h's residuals of rows ``t = p, p+1, ...`` in its first
    ``M - h + 1`` entries and zeros after them (``M = n - p``)."""
    y = np.asarray(values, dtype=float)
    n = y.shape[0]
    D = constant_only(n) if deterministic is None else np.asarray(deterministic, dtype=float)
    if D.ndim != 2 or D.shape[0] != n:
        raise PlannerError(f"deterministic must have one row per day ({n}), got shape {D.shape}")
    k = D.shape[1] + order
    rows = n - order - np.arange(horizon)  # rows of regression h = 1 .. H
    if rows[-1] <= k:
        h = int(np.argmax(rows <= k)) + 1
        raise PlannerError(f"history: {n} days are too few to fit {k} coefficients at horizon {h}")
    designs = _Designs(y, D, order, horizon)
    coefficients = np.zeros((horizon, k))
    alone = np.ones(horizon, bool)
    gram = designs.gram()
    try:
        np.linalg.cholesky(gram)  # positive definite, as least_squares' Cholesky factor asks
        inverse = np.linalg.inv(gram)
    except np.linalg.LinAlgError:
        pass  # every horizon alone: each then decides between Cholesky and SVD
    else:
        coefficients = _times(inverse, designs.cross(designs.targets))
        step = _times(inverse, designs.cross(designs.residuals(coefficients)))
        coefficients = coefficients + step
        size = np.abs(coefficients).max(axis=1)
        alone = ~np.all(np.isfinite(coefficients), axis=1) | (
            np.abs(step).max(axis=1) > REFINED_WITHIN * size
        )
    for h in np.flatnonzero(alone):
        fit = fit_ar(y, order, D, horizon=int(h) + 1, hold_back=order, engine="numpy")
        coefficients[h] = fit.coefficients
    return coefficients, designs.residuals(coefficients)


def direct_grams(
    values: np.ndarray, order: int, horizon: int, deterministic: np.ndarray
) -> np.ndarray:
    """``X_h'X_h`` of the H direct regressions, ``(H, k, k)`` (for their coefficients'
    standard errors)."""
    y = np.asarray(values, dtype=float)
    return _Designs(y, np.asarray(deterministic, dtype=float), order, horizon).gram()


def _times(matrices: np.ndarray, vectors: np.ndarray) -> np.ndarray:
    """``matrices[h] @ vectors[h]`` for every h."""
    return np.matmul(matrices, vectors[:, :, None])[:, :, 0]


class _Designs:
    """The H designs: row ``i`` of regression h is ``[D[p + h - 1 + i], L[i]]`` with target
    ``y[p + h - 1 + i]``. Per-horizon quantities are ``(H, M)`` arrays, zero past each
    regression's rows."""

    def __init__(self, y: np.ndarray, D: np.ndarray, order: int, horizon: int) -> None:
        n, kd = D.shape
        M = n - order
        self.L = lag_matrix(y, order)[0]  # (M, p)
        self.D = D[order:]  # (M, kd): row r is the target day order + r
        self.exists = np.arange(M)[None, :] < M - np.arange(horizon)[:, None]  # (H, M)
        padded_y = np.concatenate([y[order:], np.zeros(horizon - 1)])
        self.targets = sliding_window_view(padded_y, M)[:horizon].copy()  # zeros past the end
        padded_D = np.concatenate([self.D, np.zeros((horizon - 1, kd))])
        self.windows = sliding_window_view(padded_D, (M, kd))[:horizon, 0]  # (H, M, kd) view
        self.order, self.horizon = order, horizon

    def _by_horizon(self, by_day: np.ndarray) -> np.ndarray:
        """The ``(H, M)`` view ``[h, i] -> by_day[h, h + i]`` of a C-ordered ``(H, M + H - 1)``
        array of horizons x target days: what regression h's row i reads from it."""
        horizon, day = by_day.strides
        shape = (self.horizon, self.D.shape[0])
        return as_strided(by_day, shape=shape, strides=(horizon + day, day))

    def gram(self) -> np.ndarray:
        """``X_h'X_h`` for every h, ``(H, k, k)``."""
        D, L, p, H = self.D, self.L, self.order, self.horizon
        kd, M = D.shape[1], L.shape[0]
        fewest = M - H + 1
        gram = np.empty((H, kd + p, kd + p))
        gram[-1, :kd, :kd] = D[H - 1 :].T @ D[H - 1 :]
        extra = D[: H - 1]  # the first row of regressions h = 1 .. H-1
        outer = extra[:, :, None] * extra[:, None, :]
        gram[:-1, :kd, :kd] = gram[-1, :kd, :kd] + np.cumsum(outer[::-1], axis=0)[::-1]
        gram[-1, kd:, kd:] = L[:fewest].T @ L[:fewest]
        extra = L[fewest:]  # the last row of regressions h = H-1 .. 1
        outer = extra[:, :, None] * extra[:, None, :]
        gram[:-1, kd:, kd:] = gram[-1, kd:, kd:] + np.cumsum(outer, axis=0)[::-1]
        cross = np.matmul(self.windows.transpose(0, 2, 1), L)  # padding rows are zero
        gram[:, :kd, kd:] = cross
        gram[:, kd:, :kd] = cross.transpose(0, 2, 1)
        return gram

    def cross(self, by_row: np.ndarray) -> np.ndarray:
        """``X_h' v_h`` for every h, ``(H, k)``, from ``by_row`` ``(H, M)``, zero past each
        regression's rows."""
        M = self.D.shape[0]
        by_day = np.zeros((self.horizon, M + self.horizon - 1))
        self._by_horizon(by_day)[...] = by_row
        return np.hstack([by_day[:, :M] @ self.D, by_row @ self.L])

    def residuals(self, coefficients: np.ndarray) -> np.ndarray:
        """``y_h - X_h b_h`` for every h, ``(H, M)``, zero past each regression's rows."""
        kd, M = self.D.shape[1], self.D.shape[0]
        by_day = np.zeros((self.horizon, M + self.horizon - 1))
        by_day[:, :M] = coefficients[:, :kd] @ self.D.T
        fitted = self._by_horizon(by_day) + coefficients[:, kd:] @ self.L.T
        return np.where(self.exists, self.targets - fitted, 0.0)

"""The uncertainty of a level change (and of a trend) estimated in the history, carried into
the paths.

A change inside the history is a step column of the fit (:mod:`planner.forecast.level_change`).
Each path draws the step coefficient from its sampling distribution, normal with the OLS
standard error (``sqrt(s2 [(X'X)^-1]_jj)`` with ``s2 = SSR / (nobs - k)``, statsmodels'
``OLS.bse``), the other coefficients held at their estimates. The step is the difference of the
levels after and before the change, so its variance also holds the (small, with a long history
before the change) variance of the level before it: the paths are, if anything, a little wider
than the new level's own uncertainty asks. With the direct strategy each horizon's regression
has its own step and standard error (OLS's, not corrected for the overlap of h-step errors); a
path takes one standard normal draw for all horizons, as their estimates move together. With
``refit = true`` the recursive model's refits on bootstrap series carry the step's uncertainty
already, so it is not drawn again.

A linear trend's coefficient is drawn in the same way, jointly with the steps (their OLS
covariance: a trend and a late step are partly collinear, so independent draws would
overstate both): the trend column is centred on the history's middle day
(:mod:`planner.forecast.deterministic`), so the constant held at its estimate is the level
there and a drawn slope turns the forecast about it, its error growing with the days from
the history's middle.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from planner.forecast.ar import ArFit, design
from planner.forecast.deterministic import STEP_PREFIX, step_columns
from planner.forecast.direct_fit import direct_grams
from planner.forecast.result import LevelEstimate


def _covariances(gram: np.ndarray, ssr, nobs, k: int) -> np.ndarray:
    """OLS covariance matrices of the coefficients, ``s2 (X'X)^-1`` with ``s2 = SSR / (nobs -
    k)``; ``gram`` is X'X (stackable over leading axes)."""
    scale = np.asarray(ssr, dtype=float) / (np.asarray(nobs) - k)
    return np.asarray(scale)[..., None, None] * np.linalg.pinv(gram)


def _standard_errors(covariances: np.ndarray) -> np.ndarray:
    return np.sqrt(np.diagonal(covariances, axis1=-2, axis2=-1))


def _factor(covariances: np.ndarray) -> np.ndarray:
    """``L`` with ``L L' = covariances`` (Cholesky; from the eigenvalues, negative ones set to
    0, when the matrix is only semi-definite)."""
    try:
        return np.linalg.cholesky(covariances)
    except np.linalg.LinAlgError:
        values, vectors = np.linalg.eigh(covariances)
        return vectors * np.sqrt(np.maximum(values, 0.0))[..., None, :]


def _block(covariances: np.ndarray, columns) -> np.ndarray:
    return covariances[..., columns, :][..., :, columns]


def recursive_covariances(fit: ArFit, values, deterministic: np.ndarray) -> np.ndarray:
    """OLS covariance matrix of the one-step ``fit``'s coefficients (deterministic terms, then
    lags), on its own rows of ``values``."""
    X, _ = design(np.asarray(values, dtype=float), fit.order, deterministic, 1, fit.hold_back)
    return _covariances(X.T @ X, fit.residuals @ fit.residuals, fit.nobs, X.shape[1])


def recursive_standard_errors(fit: ArFit, values, deterministic: np.ndarray) -> np.ndarray:
    """OLS standard errors of the one-step ``fit``'s coefficients."""
    return _standard_errors(recursive_covariances(fit, values, deterministic))


def direct_covariances(direct, values, deterministic: np.ndarray) -> np.ndarray:
    """``(H, k, k)`` OLS covariance matrices of the direct regressions' coefficients
    (``direct`` a :class:`planner.forecast.strategies.DirectFit` fitted on ``values``)."""
    values = np.asarray(values, dtype=float)
    grams = direct_grams(values, direct.order, direct.horizon, deterministic)
    nobs = values.shape[0] - direct.order - np.arange(direct.horizon)
    ssr = np.sum(direct.residuals**2, axis=1)
    return _covariances(grams, ssr, nobs, direct.coefficients.shape[1])


def direct_standard_errors(direct, values, deterministic: np.ndarray) -> np.ndarray:
    """``(H, k)`` OLS standard errors of the direct regressions' coefficients."""
    return _standard_errors(direct_covariances(direct, values, deterministic))


def drawn_deterministic(fit: ArFit, values, deterministic, steps, n_paths: int, rng):
    """``(n_paths, k)`` deterministic coefficients of the recursive model, the ``steps``
    columns (level steps and the trend) drawn per path, jointly, from N(estimates, their OLS
    covariance)."""
    covariances = _block(recursive_covariances(fit, values, deterministic), steps)
    coefficients = np.repeat(fit.deterministic_coefficients[None, :], n_paths, axis=0)
    coefficients[:, steps] += rng.standard_normal((n_paths, len(steps))) @ _factor(covariances).T
    return coefficients


def direct_step_shifts(direct, values, deterministic, future, steps, n_paths: int, rng):
    """``(n_paths, H)`` shifts of the direct paths: per path one standard normal vector (one
    draw per drawn column), turned by each horizon's covariance of those columns into that
    horizon's coefficient errors, times the columns' values on the day."""
    covariances = _block(direct_covariances(direct, values, deterministic), steps)  # (H, s, s)
    loadings = np.einsum("hj,hjk->hk", np.asarray(future)[:, steps], _factor(covariances))
    draws = rng.standard_normal((n_paths, len(steps)))
    return draws @ loadings.T


def level_estimates(fit: ArFit | None, values, deterministic, names) -> tuple:
    """For each step column of the one-step ``fit`` (deterministic ``names``), the estimated
    change: :class:`planner.forecast.result.LevelEstimate`, its long-run size in admissions
    per day (step / (1 - sum of the lag coefficients)) and that size's standard error (the
    step's OLS standard error scaled alike, the lag coefficients taken as known)."""
    steps = step_columns(names)
    if fit is None or not steps:
        return ()
    errors = recursive_standard_errors(fit, values, deterministic)
    persistence = 1.0 - float(np.sum(fit.lag_coefficients))
    if persistence <= 0:
        persistence = float("nan")
    return tuple(
        LevelEstimate(
            pd.Timestamp(names[j][len(STEP_PREFIX) :]),
            float(fit.coefficients[j]) / persistence,
            float(errors[j]) / persistence,
        )
        for j in steps
    )

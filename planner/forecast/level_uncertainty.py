"""The uncertainty of a level change estimated inside the history, carried into the paths.

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
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from planner.forecast.ar import ArFit, design
from planner.forecast.deterministic import STEP_PREFIX, step_columns
from planner.forecast.direct_fit import direct_grams
from planner.forecast.result import LevelEstimate


def _standard_errors(gram: np.ndarray, ssr, nobs, k: int) -> np.ndarray:
    """OLS standard errors of every coefficient (the last axis); ``gram`` is X'X (stackable)."""
    scale = np.asarray(ssr, dtype=float) / (np.asarray(nobs) - k)
    inverse_diagonal = np.diagonal(np.linalg.pinv(gram), axis1=-2, axis2=-1)
    return np.sqrt(np.asarray(scale)[..., None] * inverse_diagonal)


def recursive_standard_errors(fit: ArFit, values, deterministic: np.ndarray) -> np.ndarray:
    """OLS standard errors of the one-step ``fit``'s coefficients (deterministic terms, then
    lags), on its own rows of ``values``."""
    X, _ = design(np.asarray(values, dtype=float), fit.order, deterministic, 1, fit.hold_back)
    return _standard_errors(X.T @ X, fit.residuals @ fit.residuals, fit.nobs, X.shape[1])


def direct_standard_errors(direct, values, deterministic: np.ndarray) -> np.ndarray:
    """``(H, k)`` OLS standard errors of the direct regressions' coefficients (``direct`` a
    :class:`planner.forecast.strategies.DirectFit` fitted on ``values``)."""
    values = np.asarray(values, dtype=float)
    grams = direct_grams(values, direct.order, direct.horizon, deterministic)
    nobs = values.shape[0] - direct.order - np.arange(direct.horizon)
    ssr = np.sum(direct.residuals**2, axis=1)
    return _standard_errors(grams, ssr, nobs, direct.coefficients.shape[1])


def drawn_deterministic(fit: ArFit, values, deterministic, steps, n_paths: int, rng):
    """``(n_paths, k)`` deterministic coefficients of the recursive model, the ``steps``
    columns drawn per path from N(estimate, OLS standard error^2)."""
    errors = recursive_standard_errors(fit, values, deterministic)[steps]
    coefficients = np.repeat(fit.deterministic_coefficients[None, :], n_paths, axis=0)
    coefficients[:, steps] += rng.standard_normal((n_paths, len(steps))) * errors
    return coefficients


def direct_step_shifts(direct, values, deterministic, future, steps, n_paths: int, rng):
    """``(n_paths, H)`` shifts of the direct paths: per path one standard normal draw per step,
    times each horizon's standard error of that step and the step's value on the day."""
    errors = direct_standard_errors(direct, values, deterministic)[:, steps]  # (H, s)
    draws = rng.standard_normal((n_paths, len(steps)))
    return draws @ (errors * np.asarray(future)[:, steps]).T


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

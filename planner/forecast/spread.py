"""Spread that follows the level: residuals scaled by the square root of the fitted level.

Admissions are counts whose variance grows with their mean (Poisson: variance = mean), so one
pooled set of residuals gives a quiet weekend the spread of a busy Monday, and a level that
has risen (a declared level change, a trend) the spread of the years before it. With
``forecast.spread = "level"`` (the default) the bootstrap resamples Pearson-type residuals

    z_t = e_t / sqrt(max(m_t, FLOOR))

(``e_t`` the residual, ``m_t = y_t - e_t`` the fitted value the regression gave the day, in
admissions per day), centred, and a path's day ``d`` gets the shock ``z* sqrt(max(m_d, FLOOR))``
with ``m_d`` that path's own expected value for the day: for the recursive strategy the
one-step prediction from the path's lags and the calendar, for the direct strategy the point
forecast of horizon day ``d``. The variance of a shock is then proportional to the level, as for
Poisson counts (and to within a constant for any count whose variance is a multiple of its
mean); the point forecasts are those of the ordinary least-squares fit, unchanged.

The mean is kept without a back-transform correction: the scale is known before the shock is
drawn and the resampled ``z`` are centred, so each day's expected value given the path so far is
``m_d``, as with constant spread. (A fit on the square-root scale would need one: ``E[y] =
E[sqrt y]^2 + Var(sqrt y)``; scaling the residuals keeps the fit on the admissions' own scale,
so the information criteria, the level changes' steps and the trend are those of the usual
regression.) ``FLOOR`` keeps a day whose fitted value is near 0 from dividing by almost nothing.

``"auto"`` chooses between the two by the backtest (:func:`one_step_pinball`): at each origin
the one-step model fitted on the days before it predicts each day up to the next origin from
the observed lags, and the day's predictive quantiles are the prediction plus the quantiles of
the origin's centred in-sample residuals (times the day's level scale for "level"); the spread
with the lower mean pinball loss over all those days is used by the backtest's paths and the
forecast (ties go to "level"). The choice costs no extra paths, and it is made on errors the
fits did not see. A forecast that runs no backtest (a fixed strategy with in-sample residuals)
takes "level" for "auto".

``"constant"`` resamples the residuals as they are (one spread for every day): the Box-Jenkins
forecast-error variances of a Gaussian AR model hold for it (``tests/test_forecast_bootstrap.py``),
and on a Gaussian AR around a constant level the two agree up to the level's small changes.
"""

from __future__ import annotations

import numpy as np

from planner.forecast import metrics
from planner.forecast.result import QUANTILE_LEVELS

#: The spreads "auto" chooses between.
SPREADS = ("level", "constant")

#: Smallest fitted level (admissions per day) the residuals are scaled by.
FLOOR = 0.5


def level_scale(level) -> np.ndarray:
    """``sqrt(max(level, FLOOR))``: the factor a standardised residual is multiplied by."""
    return np.sqrt(np.maximum(np.asarray(level, dtype=float), FLOOR))


def standardised(errors, levels) -> np.ndarray:
    """``errors / level_scale(levels)`` (NaN stays NaN)."""
    return np.asarray(errors, dtype=float) / level_scale(np.nan_to_num(levels, nan=FLOOR))


def pool_on_scale(values, pool, spread: str) -> np.ndarray:
    """The one-step residual ``pool`` of the last ``len(pool)`` days of ``values``, standardised
    by their fitted levels (``values - pool``) when ``spread`` is "level", as is otherwise."""
    pool = np.asarray(pool, dtype=float)
    if spread != "level" or pool.shape[0] == 0:
        return pool
    values = np.asarray(values, dtype=float)
    return standardised(pool, values[values.shape[0] - pool.shape[0] :] - pool)


def error_paths_on_scale(values, error_paths, first_days, spread: str) -> np.ndarray:
    """Error paths (rows: an origin's errors on its forecast days 1 .. H) standardised by their
    fitted levels when ``spread`` is "level": row ``i``'s day ``h`` is the error of
    ``values[first_days[i] + h - 1]`` (NaN where that day is past the end of ``values``)."""
    error_paths = np.asarray(error_paths, dtype=float)
    if spread != "level":
        return error_paths
    values = np.asarray(values, dtype=float)
    targets = np.asarray(first_days)[:, None] + np.arange(error_paths.shape[1])[None, :]
    inside = targets < values.shape[0]
    observed = np.where(inside, values[np.minimum(targets, values.shape[0] - 1)], np.nan)
    return standardised(error_paths, observed - error_paths)


def one_step_quantiles(training, residuals, predictions, spread: str) -> np.ndarray:
    """``(days, levels)`` one-step predictive quantiles at :data:`QUANTILE_LEVELS`: the
    ``predictions`` (admissions per day) plus the quantiles of the fit's centred ``residuals``
    of the last days of ``training`` (standardised, then times the day's level scale, for
    "level")."""
    pool = pool_on_scale(training, residuals, spread)
    quantiles = np.quantile(pool - pool.mean(), QUANTILE_LEVELS)
    predictions = np.asarray(predictions, dtype=float)
    scale = level_scale(predictions) if spread == "level" else np.ones_like(predictions)
    return predictions[:, None] + scale[:, None] * quantiles[None, :]


def one_step_pinball(records) -> dict[str, float]:
    """Mean pinball loss of each spread's one-step predictive quantiles over the backtest's
    days; ``records``: per origin ``(training, residuals, observed, predictions)``."""
    observed = np.concatenate([r[2] for r in records])
    return {
        spread: metrics.pinball_loss(
            observed,
            np.vstack([one_step_quantiles(r[0], r[1], r[3], spread) for r in records]),
            QUANTILE_LEVELS,
        )
        for spread in SPREADS
    }


def chosen_spread(scores: dict[str, float]) -> str:
    """The spread with the lower loss (ties: "level")."""
    return min(SPREADS, key=lambda spread: (scores[spread], SPREADS.index(spread)))

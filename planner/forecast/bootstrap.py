"""Sample paths of daily admissions by residual bootstrap, and their rounding to counts.

- Recursive: each day of each path gets a residual drawn (with replacement) from the centred
  one-step residuals, and the perturbed value is fed back as a lag, so errors propagate through
  the AR dynamics. One loop over the horizon, arrays over paths.
- Recursive with ``refit``: parameter uncertainty as well. ``n_series`` bootstrap histories are
  rebuilt from the fitted model and resampled residuals (starting from the observed first ``p``
  days, on the observed calendar), the model is refitted on each at the same order, and path
  ``i`` uses refit ``i mod n_series``; all paths start from the observed last ``p`` days and
  take their shocks from the original residual pool. A few dozen refits capture the parameter
  spread at a small cost; refitting once per path would cost one regression per path.
- Spread: with ``scaled`` the pools hold standardised residuals and each shock is multiplied
  by the square root of the path's expected value of the day (:mod:`planner.forecast.spread`);
  the callers standardise the pools (:func:`planner.forecast.spread.pool_on_scale`).
- Direct: each path draws ONE estimation origin and adds that origin's whole vector of
  ``h``-step residuals (``h = 1 .. H``, from the H direct regressions on their common origins)
  to the direct point forecast. A path is then a realised error path of the data, with its
  day-to-day dependence, not a set of independent daily draws.
- Rows: by default drawn uniformly from the generator ``rng``; ``rng`` may instead be a row
  chooser (:mod:`planner.forecast.rows`) that names the rows, as when several wards' paths take
  the same days (:mod:`planner.forecast.joint`). The refit bootstrap's rebuilt histories are
  always drawn from a generator (the chooser's :meth:`~planner.forecast.rows.RowChooser.split`).

Counts (:func:`to_counts`): paths are continuous; they are clipped at 0 admissions and rounded
to the nearest whole number (halves to even), with no random draw. The resampled residuals are
differences of whole admissions from fitted values, so a path already carries the count noise
of the data: rounding only maps it onto whole numbers. Rounding to the nearest adds the
quantisation variance of about 1/12 admission^2 (Sheppard) where a path's values are spread
over several whole numbers, and nothing where they sit near whole numbers (a level-scaled
residual moved to a day of about its own level); it keeps the mean up to a bias that vanishes
fast as the spread grows (the fractions are then near uniform). Stochastic rounding (floor plus
a Bernoulli draw of the fraction) would keep the mean exactly but adds twice that variance
(E[f(1 - f)] = 1/6 for uniform fractions) on top of noise the residuals hold already. Values
below 0 become 0 (a day of no admissions); clipping lifts the mean only by the mass below
-0.5, measured on the low-count ward (about 2 a day, tests/test_forecast_known_processes.py).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from planner.errors import PlannerError
from planner.forecast.ar import ArFit, design
from planner.forecast.rows import RowChooser, as_rows
from planner.forecast.spread import level_scale
from planner.forecast.strategies import simulate_recursive


def centred(residuals) -> np.ndarray:
    """Residuals minus their mean (column means for a matrix of error paths, over the values
    that are not NaN)."""
    residuals = np.asarray(residuals, dtype=float)
    if residuals.shape[0] == 0:
        raise PlannerError("residuals: no residuals to resample")
    if np.isnan(residuals).any():
        return residuals - np.nanmean(residuals, axis=0)
    return residuals - residuals.mean(axis=0)


def recursive_paths(
    fit: ArFit,
    last_values,
    future_deterministic: np.ndarray,
    n_paths: int,
    rng: np.random.Generator | RowChooser,
    residual_pool=None,
    deterministic_coefficients=None,
    scaled: bool = False,
) -> np.ndarray:
    """``(n_paths, H)`` continuous paths from the recursive model; shocks are resampled from
    ``residual_pool`` (default: the fit's in-sample residuals), centred, and scaled by the
    level with ``scaled`` (the pool then standardised); ``rng``: a generator or a row chooser
    (module docstring).
    ``deterministic_coefficients``: ``(n_paths, k)`` per path instead of the fit's."""
    pool = centred(fit.residuals if residual_pool is None else residual_pool)
    horizon = future_deterministic.shape[0]
    shocks = pool[as_rows(rng).shock_rows(pool.shape[0], (n_paths, horizon))]
    if deterministic_coefficients is None:
        deterministic_coefficients = fit.deterministic_coefficients
    return simulate_recursive(
        fit.lag_coefficients,
        deterministic_coefficients,
        last_values,
        future_deterministic,
        shocks,
        scaled,
    )


def bootstrap_histories(
    fit: ArFit,
    values,
    deterministic: np.ndarray,
    n_series: int,
    rng: np.random.Generator,
    pool=None,
    scaled: bool = False,
) -> np.ndarray:
    """``(n_series, n)`` series rebuilt from the fitted one-step model with resampled centred
    residuals (``pool``, default the fit's; scaled by the level with ``scaled``), starting from
    the observed first ``p`` days (same calendar as ``values``)."""
    values = np.asarray(values, dtype=float)
    order = fit.order
    pool = centred(fit.residuals if pool is None else pool)
    future = deterministic[order:]
    shocks = pool[rng.integers(0, pool.shape[0], size=(n_series, future.shape[0]))]
    rebuilt = simulate_recursive(
        fit.lag_coefficients,
        fit.deterministic_coefficients,
        values[:order],
        future,
        shocks,
        scaled,
    )
    return np.hstack([np.broadcast_to(values[:order], (n_series, order)), rebuilt])


@dataclass(frozen=True)
class ShockPools:
    """The residuals a refit bootstrap draws from: ``fit_pool`` rebuilds the histories (the fit's
    in-sample residuals), ``pool`` gives the paths' shocks (the same, or the backtest's
    out-of-sample errors); both standardised when ``scaled`` (shocks then scaled by the
    level)."""

    fit_pool: np.ndarray
    pool: np.ndarray
    scaled: bool = False


def refit_recursive_paths(
    fit: ArFit,
    values,
    deterministic: np.ndarray,
    future_deterministic: np.ndarray,
    n_paths: int,
    n_series: int,
    rng: np.random.Generator | RowChooser,
    pools: ShockPools | None = None,
) -> np.ndarray:
    """Recursive paths with parameter uncertainty (see the module docstring); ``pools``
    default: the fit's residuals for both, one spread; ``rng``: a generator or a row chooser
    of the paths' shocks (the rebuilt histories drawn from its generator)."""
    if pools is None:
        pools = ShockPools(fit.residuals, fit.residuals)
    series_rng, shock_rows = as_rows(rng).split()
    histories = bootstrap_histories(
        fit, values, deterministic, n_series, series_rng, pools.fit_pool, pools.scaled
    )
    coefficients = np.empty((n_series, fit.coefficients.shape[0]))
    for b in range(n_series):
        X, y = design(histories[b], fit.order, deterministic, 1, fit.hold_back)
        coefficients[b] = np.linalg.lstsq(X, y, rcond=None)[0]
    per_path = coefficients[np.arange(n_paths) % n_series]
    pool = centred(pools.pool)
    horizon = future_deterministic.shape[0]
    shocks = pool[shock_rows.shock_rows(pool.shape[0], (n_paths, horizon))]
    k = fit.n_deterministic
    return simulate_recursive(
        per_path[:, k:], per_path[:, :k], values, future_deterministic, shocks, pools.scaled
    )


def direct_paths(
    point: np.ndarray,
    error_paths: np.ndarray,
    n_paths: int,
    rng: np.random.Generator | RowChooser,
    scaled: bool = False,
) -> np.ndarray:
    """``(n_paths, H)``: ``point`` (H,) plus one whole row of ``error_paths`` (origins x H) per
    path, the row drawn uniformly with replacement (or named by a row chooser ``rng``: module
    docstring); with ``scaled`` the rows are standardised errors, multiplied by the square root
    of each day's point forecast.

    A row may end in NaN: a backtest origin whose horizon ran past the end of the history
    observed only its first days. Rows are then ordered by the days they observed, most first
    (earlier origins first), and each unobserved day of a drawn row takes that horizon day's
    error from a row drawn uniformly among those that observed it (one more draw per path and
    day, made only when some row has NaN)."""
    error_paths = np.asarray(error_paths, dtype=float)
    if error_paths.ndim != 2 or error_paths.shape[0] == 0:
        raise PlannerError("residuals: no complete error paths to resample")
    if error_paths.shape[1] != point.shape[0]:
        raise PlannerError(
            f"horizon: error paths cover {error_paths.shape[1]} days, need {point.shape[0]}"
        )
    known = ~np.isnan(error_paths)
    observed = known.sum(axis=0)  # rows observing each horizon day: the first ones
    first_rows = np.arange(known.shape[0])[:, None] < observed[None, :]
    if not observed.all() or not np.array_equal(known, first_rows):
        raise PlannerError("residuals: error paths must observe every day's first rows")
    rows = as_rows(rng).error_rows(known, n_paths)
    errors = error_paths[rows, np.arange(error_paths.shape[1])[None, :]]
    if scaled:
        errors = errors * level_scale(point)[None, :]
    return point[None, :] + errors


def to_counts(paths) -> np.ndarray:
    """Clip at 0 and round to the nearest whole number of admissions (int64); see the module
    docstring."""
    return np.rint(np.maximum(np.asarray(paths, dtype=float), 0.0)).astype(np.int64)

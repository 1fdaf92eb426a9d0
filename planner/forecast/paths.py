"""From one training window to continuous sample paths, for one strategy.

This is the procedure that the backtest evaluates at each origin and that the forecast runs
once on the whole history: choose the AR order on the training data (unless fixed), fit, then
bootstrap paths (see :mod:`planner.forecast.bootstrap`). The strategies are "recursive",
"direct" and the benchmark "seasonal_naive".
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from planner.forecast.ar import ArFit, fit_selected
from planner.forecast.bootstrap import (
    ShockPools,
    centred,
    direct_paths,
    recursive_paths,
    refit_recursive_paths,
)
from planner.forecast.deterministic import drawn_columns
from planner.forecast.level_uncertainty import direct_step_shifts, drawn_deterministic
from planner.forecast.naive import seasonal_naive_errors, seasonal_naive_point
from planner.forecast.rows import PoolRows, RowChooser
from planner.forecast.spread import error_paths_on_scale, pool_on_scale
from planner.forecast.strategies import direct_point, fit_direct, recursive_point

#: Every strategy here, each scored by the backtest: the two the forecast can use and the
#: benchmark.
STRATEGIES = ("recursive", "direct", "seasonal_naive")


@dataclass(frozen=True)
class StrategyPaths:
    """Continuous paths ``(n_paths, H)`` and point forecast ``(H,)`` in admissions per day, with
    the one-step fit behind them (``None`` for the seasonal naive benchmark)."""

    strategy: str
    paths: np.ndarray
    point: np.ndarray
    one_step: ArFit | None


@dataclass(frozen=True)
class SeriesDesign:
    """A series to fit and forecast: ``values`` (admissions per day), ``deterministic`` (the
    calendar terms aligned to it, one row per day), ``future`` (the same terms for the forecast
    days) and the terms' ``names``."""

    values: np.ndarray
    deterministic: np.ndarray
    future: np.ndarray
    names: tuple[str, ...] | None = None


@dataclass(frozen=True)
class BacktestErrors:
    """Out-of-sample errors (admissions) resampled instead of the in-sample residuals:
    ``one_step``, the one-step errors of the last days of the values (the recursive model's
    shocks); ``paths``, the direct strategy's error paths (origins x H, NaN on days an origin
    did not observe, see :func:`planner.forecast.bootstrap.direct_paths`); ``first_days``, the
    position in the values of each error path's first day (for their fitted levels)."""

    one_step: np.ndarray
    paths: np.ndarray
    first_days: np.ndarray


def one_step_fit(design: SeriesDesign, settings) -> ArFit:
    """The one-step model of the design's values: order chosen (unless fixed), then fitted."""
    return fit_selected(
        design.values,
        settings.max_lag,
        design.deterministic,
        design.names,
        settings.criterion,
        settings.order,
        engine="numpy",
        min_lag=settings.min_lag,
    )


def model_paths(
    strategy: str,
    design: SeriesDesign,
    settings,
    n_paths: int,
    rng: np.random.Generator,
    *,
    one_step: ArFit | None = None,
    errors: BacktestErrors | None = None,
    rows: RowChooser | None = None,
) -> StrategyPaths:
    """Fit ``strategy`` on the design's values and simulate ``n_paths`` paths over the
    ``H = len(design.future)`` following days.

    ``one_step``: the one-step model already fitted on these values with these settings (the
    backtest fits it once per origin for both strategies). ``errors``
    (:class:`BacktestErrors`, for ``residuals="backtest"``) replace the in-sample residuals.
    ``rows``: a row chooser (:mod:`planner.forecast.rows`) naming the resampled residuals'
    rows (those of :func:`pool_rows`) instead of drawing them from ``rng``, which then draws
    only the level steps' and trend's coefficients (the refits' histories are drawn from the
    generator the chooser's ``split`` gives).

    ``settings.spread`` "level" standardises the residuals by their fitted levels and scales
    the shocks by each path's level (:mod:`planner.forecast.spread`); the seasonal naive
    benchmark keeps one spread.

    Level changes' step columns and the trend (named in ``design.names``) have their
    coefficients drawn per path (:mod:`planner.forecast.level_uncertainty`); without them no
    extra numbers are drawn.
    """
    values, deterministic, names = design.values, design.deterministic, design.names
    future_deterministic = design.future
    horizon = future_deterministic.shape[0]
    if strategy == "seasonal_naive":
        point = seasonal_naive_point(values, horizon)
        paths = direct_paths(point, seasonal_naive_errors(values, horizon), n_paths, rng)
        return StrategyPaths(strategy, paths, point, None)
    if one_step is None:
        one_step = one_step_fit(design, settings)
    steps = drawn_columns(names)  # level steps and the trend
    shocks = rng if rows is None else rows
    scaled = settings.spread == "level"
    fit_pool = pool_on_scale(values, one_step.residuals, settings.spread)
    pool = fit_pool
    if errors is not None:
        pool = pool_on_scale(values, errors.one_step, settings.spread)
    if strategy == "recursive":
        point = recursive_point(one_step, values, future_deterministic)
        if settings.refit:  # the refits carry the steps' and trend's uncertainty already
            paths = refit_recursive_paths(
                one_step,
                values,
                deterministic,
                future_deterministic,
                n_paths,
                settings.refit_series,
                shocks,
                ShockPools(fit_pool, pool, scaled),
            )
        else:
            drawn = (
                drawn_deterministic(one_step, values, deterministic, steps, n_paths, rng)
                if steps
                else None
            )
            paths = recursive_paths(
                one_step, values, future_deterministic, n_paths, shocks, pool, drawn, scaled
            )
        return StrategyPaths(strategy, paths, point, one_step)
    direct = fit_direct(values, one_step.order, horizon, deterministic)
    point = direct_point(direct, values, future_deterministic)
    if errors is None:
        error_paths = direct.aligned_residuals()
        first_days = in_sample_origins(values.shape[0], direct.order, horizon)
    else:
        error_paths, first_days = errors.paths, errors.first_days
    error_paths = error_paths_on_scale(values, error_paths, first_days, settings.spread)
    paths = direct_paths(point, centred(error_paths), n_paths, shocks, scaled)
    if steps:
        future = future_deterministic
        paths += direct_step_shifts(direct, values, deterministic, future, steps, n_paths, rng)
    return StrategyPaths(strategy, paths, point, one_step)


def in_sample_origins(n: int, order: int, horizon: int) -> np.ndarray:
    """Positions in ``n`` days of values of the first forecast day of each in-sample error
    path of the direct strategy (the rows of
    :meth:`planner.forecast.strategies.DirectFit.aligned_residuals`)."""
    return order + np.arange(n - order - horizon + 1)


def pool_rows(
    strategy: str, design: SeriesDesign, one_step: ArFit, errors: BacktestErrors | None = None
) -> PoolRows:
    """The rows :func:`model_paths` resamples for ``strategy`` ("recursive" or "direct") on
    ``design`` with this one-step fit and these ``errors``, named by their days counted back
    from the last day of the values (:class:`planner.forecast.rows.PoolRows`)."""
    n = design.values.shape[0]
    if strategy == "recursive":
        size = (one_step.residuals if errors is None else errors.one_step).shape[0]
        return PoolRows(strategy, size - np.arange(size))
    if errors is None:
        first_days = in_sample_origins(n, one_step.order, design.future.shape[0])
        known = np.ones((first_days.shape[0], design.future.shape[0]), dtype=bool)
    else:
        first_days, known = errors.first_days, ~np.isnan(errors.paths)
    return PoolRows(strategy, n - np.asarray(first_days), known)

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
    centred,
    direct_paths,
    recursive_paths,
    refit_recursive_paths,
)
from planner.forecast.deterministic import step_columns
from planner.forecast.level_uncertainty import direct_step_shifts, drawn_deterministic
from planner.forecast.naive import seasonal_naive_errors, seasonal_naive_point
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


def model_paths(
    strategy: str,
    design: SeriesDesign,
    settings,
    n_paths: int,
    rng: np.random.Generator,
    *,
    one_step: ArFit | None = None,
    residual_pool: np.ndarray | None = None,
    error_paths: np.ndarray | None = None,
) -> StrategyPaths:
    """Fit ``strategy`` on the design's values and simulate ``n_paths`` paths over the
    ``H = len(design.future)`` following days.

    ``one_step``: the one-step model already fitted on these values with these settings (the
    backtest fits it once per origin for both strategies). ``residual_pool`` replaces the
    recursive model's in-sample residuals and ``error_paths`` the direct model's aligned
    residual paths (used for ``residuals="backtest"``; days an error path did not observe are
    NaN, see :func:`planner.forecast.bootstrap.direct_paths`).

    Level changes' step columns (named in ``design.names``) have their coefficient drawn per
    path (:mod:`planner.forecast.level_uncertainty`); without them no extra numbers are drawn.
    """
    values, deterministic, names = design.values, design.deterministic, design.names
    future_deterministic = design.future
    horizon = future_deterministic.shape[0]
    if strategy == "seasonal_naive":
        point = seasonal_naive_point(values, horizon)
        paths = direct_paths(point, seasonal_naive_errors(values, horizon), n_paths, rng)
        return StrategyPaths(strategy, paths, point, None)
    if one_step is None:
        one_step = fit_selected(
            values,
            settings.max_lag,
            deterministic,
            names,
            settings.criterion,
            settings.order,
            engine="numpy",
            min_lag=settings.min_lag,
        )
    steps = step_columns(names)
    if strategy == "recursive":
        point = recursive_point(one_step, values, future_deterministic)
        if settings.refit:  # the refits carry a level step's uncertainty already
            paths = refit_recursive_paths(
                one_step,
                values,
                deterministic,
                future_deterministic,
                n_paths,
                settings.refit_series,
                rng,
                residual_pool,
            )
        else:
            drawn = (
                drawn_deterministic(one_step, values, deterministic, steps, n_paths, rng)
                if steps
                else None
            )
            paths = recursive_paths(
                one_step, values, future_deterministic, n_paths, rng, residual_pool, drawn
            )
        return StrategyPaths(strategy, paths, point, one_step)
    direct = fit_direct(values, one_step.order, horizon, deterministic)
    point = direct_point(direct, values, future_deterministic)
    errors = centred(direct.aligned_residuals() if error_paths is None else error_paths)
    paths = direct_paths(point, errors, n_paths, rng)
    if steps:
        future = future_deterministic
        paths += direct_step_shifts(direct, values, deterministic, future, steps, n_paths, rng)
    return StrategyPaths(strategy, paths, point, one_step)

"""The forecast engine's two entry points: :func:`forecast_admissions` and :func:`run_backtest`.

Data flow: validated history -> deterministic terms (with a step per level change inside the
history) -> (backtest, when the strategy is "auto" or residuals are "backtest"; it chooses
an "auto" spread, which is "level" without a backtest: :mod:`planner.forecast.spread`) -> fit and
bootstrap paths for the chosen strategy -> announced level changes -> demand adjustments ->
clip and round to whole admissions -> :class:`ForecastResult`, with the drift alarm
(:mod:`planner.forecast.drift`) on the last weeks' one-step errors.

With ``residuals = "backtest"`` the direct strategy needs at least
:data:`planner.forecast.settings.LEAST_ERROR_PATHS` error paths from the backtest (one per
origin): a scenario asking for the direct strategy is refused when it is read, one with
"auto" when the backtest chooses the direct strategy.

Randomness: ``rng`` is split with ``Generator.spawn`` into independent streams for the backtest
and the paths, so the same seed gives the same result.

Two steps, so that a forecast of several wards drawn together (:mod:`planner.forecast.joint`)
runs the same pipeline: :func:`plan_forecast` does everything before the paths (terms,
backtest, the strategy and spread chosen, backtest errors) and :func:`finish_forecast`
everything after them (level changes, demand, counts, the summary).

``cache``: a folder of the backtest cache (:mod:`planner.forecast.backtest_cache`), or None to
compute the backtest every time; the result is the same either way.

``settings`` are taken as valid: their allowed values and limits are the scenario's keys
(:mod:`planner.schema`), checked once, when the scenario is read; ``horizon`` and ``n_paths``
come from the scenario and the command line, which both refuse values below 1.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from pathlib import Path

import numpy as np
import pandas as pd

from planner.errors import PlannerError
from planner.forecast.adjust import adjust_paths
from planner.forecast.backtest import BacktestInputs
from planner.forecast.backtest_cache import cached_backtest
from planner.forecast.bootstrap import to_counts
from planner.forecast.deterministic import terms_for_history
from planner.forecast.drift import watched_drift
from planner.forecast.level_change import announced_changes, level_multipliers
from planner.forecast.level_uncertainty import level_estimates
from planner.forecast.paths import BacktestErrors, SeriesDesign, StrategyPaths, model_paths
from planner.forecast.result import BacktestResult, ForecastResult, ForecastSummary
from planner.forecast.settings import LEAST_ERROR_PATHS

HISTORY_TAIL_DAYS = 182


def run_backtest(
    history: pd.Series,
    settings,
    horizon: int,
    n_paths: int,
    rng: np.random.Generator,
    cache: Path | None = None,
) -> BacktestResult:
    """Rolling-origin backtest of recursive, direct and seasonal naive forecasts of ``horizon``
    days (see :mod:`planner.forecast.backtest`). Given a generator made from the same seed, it
    is the very backtest :func:`forecast_admissions` runs to choose the "auto" strategy."""
    dates = pd.DatetimeIndex(history.index)
    announced_changes(settings, dates, horizon)  # refuses level changes the history cannot take
    terms = terms_for_history(settings, dates, history.to_numpy(dtype=float))
    keep = tuple(observed_columns(terms, dates))
    backtest_rng = rng.spawn(3)[0]
    inputs = BacktestInputs.build(history.to_numpy(dtype=float), dates, terms, horizon, keep)
    return cached_backtest(inputs, settings, n_paths, backtest_rng, cache)


def observed_columns(terms, dates: pd.DatetimeIndex) -> tuple[str, ...]:
    """Deterministic columns that are not all zero on the history (an empty holiday column
    would make the regression rank-deficient)."""
    in_sample = terms.in_sample(dates)
    return tuple(name for name in terms.names if in_sample[name].abs().sum() > 0)


def forecast_admissions(
    history: pd.Series,
    settings,
    horizon: int,
    n_paths: int,
    rng: np.random.Generator,
    start: pd.Timestamp | None = None,
    cache: Path | None = None,
) -> ForecastResult:
    """Sample paths of daily emergency admissions for ``horizon`` days from ``start`` (default:
    the day after the history ends; a later start forecasts through the gap and drops it);
    ``cache`` as in the module docstring."""
    plan = plan_forecast(history, settings, horizon, n_paths, rng, start, cache)
    paths = model_paths(
        plan.strategy, plan.design, plan.settings, n_paths, plan.path_rng, errors=plan.errors
    )
    return finish_forecast(plan, paths)


@dataclass(frozen=True)
class ForecastPlan:
    """One ward's forecast up to its paths: the ``history``, the days from its end to the start
    (``gap``) and the forecast days after it (``future_dates``, the gap's days first), the
    calendar ``terms`` and the ``design`` fitted, the ``strategy`` and ``settings`` (spread
    resolved) the paths use, the ``backtest`` and its overall ``pinball`` losses, the backtest
    ``errors`` resampled (or None), the announced level changes and the paths' generator."""

    history: pd.Series
    gap: int
    future_dates: pd.DatetimeIndex
    terms: object
    design: SeriesDesign
    strategy: str
    settings: object
    backtest: BacktestResult | None
    pinball: dict
    errors: BacktestErrors | None
    announced: tuple
    path_rng: np.random.Generator


def plan_forecast(
    history: pd.Series,
    settings,
    horizon: int,
    n_paths: int,
    rng: np.random.Generator,
    start: pd.Timestamp | None = None,
    cache: Path | None = None,
) -> ForecastPlan:
    """Everything :func:`forecast_admissions` does before the paths (same arguments)."""
    values = history.to_numpy(dtype=float)
    dates = pd.DatetimeIndex(history.index)
    first_day = dates[-1] + pd.Timedelta(days=1)
    start = first_day if start is None else pd.Timestamp(start).normalize()
    gap = (start - first_day).days
    if gap < 0:
        raise PlannerError(f"start: {start.date()} is before the day after the history ends")
    total = gap + horizon
    announced = announced_changes(settings, dates, total)
    terms = terms_for_history(settings, dates, values)
    keep = list(observed_columns(terms, dates))
    future_dates = pd.date_range(first_day, periods=total, freq="D")
    deterministic = terms.in_sample(dates)[keep].to_numpy()
    future_deterministic = terms.out_of_sample(future_dates)[keep].to_numpy()
    backtest_rng, path_rng, _ = rng.spawn(3)  # (the third stream drew the rounding once)

    backtest = None
    strategy = settings.strategy
    if strategy == "auto" or settings.residuals == "backtest":
        inputs = BacktestInputs.build(values, dates, terms, total, tuple(keep))
        backtest = cached_backtest(inputs, settings, n_paths, backtest_rng, cache)
    pinball = {}
    if backtest is not None:
        pinball = backtest.overall()["pinball"].to_dict()
    if strategy == "auto":
        strategy = "recursive" if pinball["recursive"] <= pinball["direct"] else "direct"
    if settings.spread == "auto":  # chosen by the backtest when one is run, else "level"
        settings = replace(settings, spread="level" if backtest is None else backtest.spread)

    errors = None
    if settings.residuals == "backtest":
        errors = BacktestErrors(
            backtest.residuals["recursive"],
            backtest.residuals["direct"],
            dates.get_indexer(backtest.origins),
        )
        error_paths = errors.paths
        if strategy == "direct" and error_paths.shape[0] < LEAST_ERROR_PATHS:
            raise PlannerError(
                f'forecast.residuals: "backtest" with the direct strategy needs at least '
                f"{LEAST_ERROR_PATHS} backtest error paths (one per origin), the backtest has "
                f"{error_paths.shape[0]}; give a longer history or more backtest origins "
                f"(forecast.backtest_origins)"
            )
    design = SeriesDesign(values, deterministic, future_deterministic, tuple(keep))
    return ForecastPlan(
        history=history,
        gap=gap,
        future_dates=future_dates,
        terms=terms,
        design=design,
        strategy=strategy,
        settings=settings,
        backtest=backtest,
        pinball=pinball,
        errors=errors,
        announced=announced,
        path_rng=path_rng,
    )


def finish_forecast(plan: ForecastPlan, result: StrategyPaths) -> ForecastResult:
    """From the continuous paths of ``plan`` to the forecast: announced level changes, demand
    adjustments, counts, the days of the gap dropped, the summary."""
    settings, gap, future_dates = plan.settings, plan.gap, plan.future_dates
    values, deterministic, keep = plan.design.values, plan.design.deterministic, plan.design.names
    dates = pd.DatetimeIndex(plan.history.index)
    paths = result.paths
    if plan.announced:
        paths = paths * level_multipliers(future_dates, plan.announced)[None, :]
    adjusted = adjust_paths(paths[:, gap:], future_dates[gap:], settings.demand)
    counts = to_counts(adjusted)
    fit = result.one_step
    summary = ForecastSummary(
        strategy=plan.strategy,
        order=fit.order if fit else 0,
        criterion=settings.criterion if settings.order is None else "fixed",
        coefficients=fit.params.to_dict() if fit else {},
        sigma2=fit.sigma2 if fit else float("nan"),
        aic=fit.aic if fit else float("nan"),
        bic=fit.bic if fit else float("nan"),
        nobs=fit.nobs if fit else len(values),
        residuals=settings.residuals,
        refit=bool(settings.refit),
        backtest=plan.backtest,
        backtest_pinball=plan.pinball,
        drift=watched_drift(fit, plan.backtest, dates, plan.terms.level_changes),
        level_changes=level_estimates(fit, values, deterministic, keep),
        announced_changes=plan.announced,
        spread=settings.spread,
        trend="trend" in keep,
    )
    return ForecastResult(
        dates=future_dates[gap:],
        paths=counts,
        mean=counts.mean(axis=0),
        summary=summary,
        history=plan.history.iloc[-HISTORY_TAIL_DAYS:].copy(),
    )

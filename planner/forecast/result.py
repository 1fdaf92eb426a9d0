"""Result objects of the forecast engine (frozen; tables are built on request).

``ForecastResult.table()`` columns: ``date`` (forecast day), ``mean`` (mean admissions over
paths), ``q05 .. q95`` (quantiles of the day's admissions over paths, patients per day).
``BacktestResult.table`` columns: ``strategy``, ``horizon_week`` (1 = forecast days 1-7, ...;
0 = all days of the horizon together), ``days`` (scored origin-days), ``mae``, ``rmse``,
``mase``, ``pinball``, ``coverage_80``, ``coverage_95``, ``interval_score_80``.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from planner.forecast.drift import DriftAlarm

QUANTILE_LEVELS = (0.05, 0.1, 0.25, 0.5, 0.75, 0.9, 0.95)


def quantile_column(level: float) -> str:
    """``0.05 -> "q05"``, ``0.5 -> "q50"``."""
    return f"q{round(level * 100):02d}"


@dataclass(frozen=True)
class BacktestResult:
    """Rolling-origin evaluation. ``origins``: first forecast day of each origin.
    ``residuals``: out-of-sample errors (admissions) per strategy, ``"recursive"``: 1-D one-step
    errors on every day of the backtest window; ``"direct"``: ``(origins, H)`` error paths of
    every origin, NaN on the days past the end of the history. ``from_cache``: True when this
    result was read from the backtest cache (:mod:`planner.forecast.backtest_cache`) rather
    than computed in this process; the numbers are the same either way. ``spread``: the spread
    the backtest's paths used (``forecast.spread``, or the one "auto" chose), and
    ``spread_pinball`` the one-step pinball losses "auto" chose it by (empty otherwise,
    :func:`planner.forecast.spread.one_step_pinball`)."""

    table: pd.DataFrame
    origins: pd.DatetimeIndex
    residuals: dict[str, np.ndarray]
    n_paths: int
    from_cache: bool = False
    spread: str = "level"
    spread_pinball: dict[str, float] = field(default_factory=dict)

    def overall(self) -> pd.DataFrame:
        """The ``horizon_week == 0`` rows, indexed by strategy."""
        return self.table[self.table["horizon_week"] == 0].set_index("strategy")


@dataclass(frozen=True)
class LevelEstimate:
    """A level change inside the history as the one-step model estimated it: from ``date``,
    ``per_day`` admissions per day in the long run, with its ``standard_error``."""

    date: pd.Timestamp
    per_day: float
    standard_error: float


@dataclass(frozen=True)
class ForecastSummary:
    """What was fitted and why. Coefficients, sigma2 (admissions^2), aic, bic and nobs are those
    of the one-step model (for "direct", its h = 1 regression is the same model). ``drift``:
    the drift alarm (:class:`planner.forecast.drift.DriftAlarm`) or None when it did not
    signal; ``level_changes``: the changes estimated inside the history;
    ``announced_changes``: the changes after it applied to the paths
    (:class:`planner.forecast.settings.LevelChange`); ``spread``: the spread of the paths
    ("level" or "constant", as set or as "auto" chose it); ``trend``: whether the model has a
    linear trend (as set or as "auto" chose it)."""

    strategy: str
    order: int
    criterion: str
    coefficients: dict[str, float]
    sigma2: float
    aic: float
    bic: float
    nobs: int
    residuals: str
    refit: bool
    backtest: BacktestResult | None = None
    backtest_pinball: dict[str, float] = field(default_factory=dict)
    drift: DriftAlarm | None = None
    level_changes: tuple[LevelEstimate, ...] = ()
    announced_changes: tuple = ()
    spread: str = "level"
    trend: bool = False


@dataclass(frozen=True)
class ForecastResult:
    """Sample paths of daily admissions: ``paths[i, d]`` patients on ``dates[d]`` in path ``i``."""

    dates: pd.DatetimeIndex
    paths: np.ndarray
    mean: np.ndarray
    summary: ForecastSummary
    history: pd.Series
    quantile_levels: tuple[float, ...] = QUANTILE_LEVELS

    @property
    def horizon(self) -> int:
        return len(self.dates)

    def table(self) -> pd.DataFrame:
        """One row per forecast day: date, mean, q05 .. q95 (patients per day)."""
        quantiles = np.quantile(self.paths, self.quantile_levels, axis=0)
        frame = pd.DataFrame({"date": self.dates, "mean": self.mean})
        for level, values in zip(self.quantile_levels, quantiles, strict=True):
            frame[quantile_column(level)] = values
        return frame

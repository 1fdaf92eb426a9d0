"""Forecast settings: what the scenario file's ``[forecast]`` and ``[demand]`` tables resolve to."""

from __future__ import annotations

from dataclasses import dataclass, field
from datetime import date

from planner.schema import default

#: Fewest backtest error paths (one per origin) the direct strategy resamples with
#: ``residuals = "backtest"``.
LEAST_ERROR_PATHS = 50


@dataclass(frozen=True)
class Surge:
    """Multiply expected admissions by ``factor`` on every day from ``start`` to ``end``
    inclusive."""

    start: date
    end: date
    factor: float


@dataclass(frozen=True)
class DemandAdjustment:
    """Changes applied to forecast admissions after the model: ``growth`` is a relative change
    (0.05 = +5% on every day), surges multiply dated ranges on top of it."""

    growth: float = default("demand.growth")
    surges: tuple[Surge, ...] = ()


@dataclass(frozen=True)
class LevelChange:
    """A dated change in the level of admissions (``[[forecast.level_change]]``).

    Inside the history the level after ``date`` is estimated (a step term in the fit) and
    ``relative_change`` is not used; after the history the paths are multiplied by
    ``1 + relative_change`` from ``date`` on, so it is required there (checked against the
    history by :func:`planner.forecast.level_change.check_level_changes`)."""

    date: date
    relative_change: float | None = None


@dataclass(frozen=True)
class ForecastSettings:
    """How admissions are modelled and sampled.

    strategy: "recursive" (one one-step AR model, predictions fed back), "direct" (one model
        per horizon day) or "auto" (the one with the lower mean pinball loss in the backtest).
    max_lag: largest AR order tried (days); min_lag: smallest (0 = calendar terms only);
        criterion: "aic" or "bic" for choosing it.
    order: a fixed AR order instead of choosing one (None = choose; 0 = calendar terms only).
    weekday: day-of-week dummies. annual: annual Fourier terms ("auto" = on with >= 2 years
        of history). fourier_pairs: number of sine/cosine pairs for the annual cycle.
    trend: a linear time trend (true, false or "auto": when it lowers the information
        criterion on the common sample; its coefficient is drawn per path).
    holiday_dates / holiday_country: public-holiday indicator.
    residuals: "in_sample" or "backtest" (out-of-sample residuals for the bootstrap).
    spread: "level" (resampled residuals scaled by the square root of the fitted level, so the
        spread follows the level: :mod:`planner.forecast.spread`), "constant" or "auto" (the
        one the backtest's one-step errors score better).
    refit: refit the recursive model on each bootstrap series (parameter uncertainty);
        refit_series: number of those series (path i uses refit i mod refit_series).
    backtest_origins / backtest_every: rolling-origin backtest, number of origins and days
        between them (default: weekly origins over the last 26 weeks); backtest_paths: sample
        paths per origin and strategy (the smaller of this and the run's paths is used).
    level_changes: dated changes in the level of admissions (:class:`LevelChange`).

    Defaults and allowed values are those of the scenario's keys (:mod:`planner.schema`); the
    scenario reader checks them, so the forecast code takes these settings as valid.
    """

    strategy: str = default("forecast.strategy")
    max_lag: int = default("forecast.max_lag")
    min_lag: int = default("forecast.min_lag")
    criterion: str = default("forecast.criterion")
    order: int | None = default("forecast.order")
    weekday: bool = default("forecast.weekday")
    annual: bool | str = default("forecast.annual")
    fourier_pairs: int = default("forecast.fourier_pairs")
    trend: bool | str = default("forecast.trend")
    holiday_dates: tuple[date, ...] = default("forecast.holidays")
    holiday_country: str | None = default("forecast.holiday_country")
    residuals: str = default("forecast.residuals")
    spread: str = default("forecast.spread")
    refit: bool = default("forecast.refit")
    refit_series: int = default("forecast.refit_series")
    backtest_origins: int = default("forecast.backtest_origins")
    backtest_every: int = default("forecast.backtest_every_days")
    backtest_paths: int = default("forecast.backtest_paths")
    level_changes: tuple[LevelChange, ...] = ()
    demand: DemandAdjustment = field(default_factory=DemandAdjustment)

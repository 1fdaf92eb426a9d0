"""Forecast settings: what the scenario file's ``[forecast]`` and ``[demand]`` tables resolve to."""

from __future__ import annotations

from dataclasses import dataclass, field
from datetime import date


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

    growth: float = 0.0
    surges: tuple[Surge, ...] = ()


@dataclass(frozen=True)
class ForecastSettings:
    """How admissions are modelled and sampled.

    strategy: "recursive" (one one-step AR model, predictions fed back), "direct" (one model
        per horizon day) or "auto" (the one with the lower mean pinball loss in the backtest).
    max_lag: largest AR order tried (days); criterion: "aic" or "bic" for choosing it.
    order: a fixed AR order instead of choosing one (None = choose).
    weekday: day-of-week dummies. annual: annual Fourier terms ("auto" = on with >= 2 years
        of history). fourier_pairs: number of sine/cosine pairs for the annual cycle.
    trend: a linear time trend. holiday_dates / holiday_country: public-holiday indicator.
    residuals: "in_sample" or "backtest" (out-of-sample residuals for the bootstrap).
    refit: refit the recursive model on each bootstrap series (parameter uncertainty);
        refit_series: number of those series (path i uses refit i mod refit_series).
    backtest_origins / backtest_every: rolling-origin backtest, number of origins and days
        between them (default: weekly origins over the last 26 weeks); backtest_paths: sample
        paths per origin and strategy (the smaller of this and the run's paths is used).
    """

    strategy: str = "auto"
    max_lag: int = 28
    criterion: str = "aic"
    order: int | None = None
    weekday: bool = True
    annual: bool | str = "auto"
    fourier_pairs: int = 3
    trend: bool = False
    holiday_dates: tuple[date, ...] = ()
    holiday_country: str | None = None
    residuals: str = "in_sample"
    refit: bool = False
    refit_series: int = 50
    backtest_origins: int = 26
    backtest_every: int = 7
    backtest_paths: int = 200
    demand: DemandAdjustment = field(default_factory=DemandAdjustment)

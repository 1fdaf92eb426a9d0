"""Forecast engine: daily emergency admissions as sample paths.

AR(p) with deterministic calendar terms (day of week, annual Fourier terms, optional trend
and holidays), order chosen by AIC/BIC, recursive or direct multi-step strategies, residual
bootstrap paths rounded to counts, and a rolling-origin backtest that can choose the strategy.
"""

from planner.forecast.pipeline import forecast_admissions, run_backtest
from planner.forecast.result import BacktestResult, ForecastResult, ForecastSummary
from planner.forecast.settings import DemandAdjustment, ForecastSettings, Surge

__all__ = [
    "BacktestResult",
    "DemandAdjustment",
    "ForecastResult",
    "ForecastSettings",
    "ForecastSummary",
    "Surge",
    "forecast_admissions",
    "run_backtest",
]

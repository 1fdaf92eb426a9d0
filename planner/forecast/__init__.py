"""Forecast engine: daily emergency admissions as sample paths.

AR(p) with deterministic calendar terms (day of week, annual Fourier terms, optional trend
and holidays), order chosen by AIC/BIC, recursive or direct multi-step strategies, residual
bootstrap paths rounded to counts, and a rolling-origin backtest that can choose the strategy.

The names below are loaded on first use (PEP 562): reading a scenario needs only
:mod:`planner.forecast.settings`, not the fitting code and the scipy it imports.
"""

from __future__ import annotations

import importlib

_SOURCES = {
    "BacktestResult": "result",
    "DemandAdjustment": "settings",
    "ForecastResult": "result",
    "ForecastSettings": "settings",
    "ForecastSummary": "result",
    "Surge": "settings",
    "forecast_admissions": "pipeline",
    "run_backtest": "pipeline",
}

__all__ = sorted(_SOURCES)


def __getattr__(name: str):
    if name not in _SOURCES:
        raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
    return getattr(importlib.import_module(f"planner.forecast.{_SOURCES[name]}"), name)


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(_SOURCES))

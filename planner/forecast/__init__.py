"""Forecast engine: daily emergency admissions as sample paths.

AR(p) with deterministic calendar terms (day of week, annual Fourier terms, optional trend
and holidays), order chosen by AIC/BIC, recursive or direct multi-step strategies, residual
bootstrap paths rounded to counts, and a rolling-origin backtest that can choose the strategy
(its results kept on disk by :mod:`planner.forecast.backtest_cache`). The entry points are
:func:`planner.forecast.pipeline.forecast_admissions` and ``run_backtest``, and
:func:`planner.forecast.joint.forecast_wards` for several wards whose paths share their days
(a busy day for the hospital is busy on several wards); the package itself
imports nothing, so reading a scenario (which needs only :mod:`planner.forecast.settings`)
does not load the fitting code.
"""

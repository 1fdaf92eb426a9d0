"""Forecast benchmark rows: fit and path generation on 3 years of daily history, H = 91, and
the direct strategy's regressions fitted one by one against solved together.

The reference in the same run is one plain statsmodels ``AutoReg`` fit and recursive point
forecast of the same order on the same rows, so the ratios say what the order search,
calendar terms and bootstrap cost on top of a single reference fit.
"""

from __future__ import annotations

import time

import numpy as np
import pandas as pd
from statsmodels.tsa.ar_model import AutoReg

from planner.forecast.pipeline import forecast_admissions
from planner.forecast.settings import ForecastSettings

HORIZON = 91


def history(days: int = 3 * 365, seed: int = 5) -> pd.Series:
    """Invented daily admissions: Poisson around 4/day with a weekday pattern and winter peak."""
    dates = pd.date_range("2023-01-02", periods=days, freq="D")
    weekday = np.where(dates.day_of_week >= 5, 0.78, 1.05)
    season = 1 + 0.12 * np.cos(2 * np.pi * (dates.day_of_year - 15) / 365.25)
    counts = np.random.default_rng(seed).poisson(4.0 * weekday * season)
    return pd.Series(counts, index=pd.DatetimeIndex(dates, freq="D"), name="admissions")


def _seconds(action, repeat: int = 1) -> float:
    best = np.inf
    for _ in range(repeat):
        clock = time.perf_counter()
        action()
        best = min(best, time.perf_counter() - clock)
    return best


def rows(path_counts=(1_000, 10_000)) -> list[tuple[str, float, str, float]]:
    """(case, seconds, reference, ratio to the reference) rows."""
    series = history()
    reference = _seconds(
        lambda: (
            AutoReg(series.to_numpy(float), 7, trend="c")
            .fit()
            .predict(len(series), len(series) + HORIZON - 1)
        ),
        repeat=3,
    )
    out = [("statsmodels AutoReg(7) fit + forecast (reference)", reference, "", 1.0)]
    for strategy in ("recursive", "direct"):
        settings = ForecastSettings(strategy=strategy)
        for paths in path_counts:
            seconds = _seconds(
                lambda s=settings, p=paths: forecast_admissions(
                    series, s, HORIZON, p, np.random.default_rng(1)
                )
            )
            out.append(
                (f"forecast {strategy}, {paths} paths", seconds, "AutoReg", seconds / reference)
            )
    return out


def direct_rows(orders=(2, 14, 28)) -> list[tuple[str, float, float]]:
    """(case, seconds, ratio) rows: the direct strategy's 91 regressions on 3 years with the
    calendar terms, fitted one by one with ``fit_ar`` (the reference, as before) and solved
    together (``direct_regressions``, what the forecast and backtest use)."""
    from planner.forecast.ar import fit_ar
    from planner.forecast.deterministic import terms_for_history
    from planner.forecast.direct_fit import direct_regressions

    series = history()
    dates = pd.DatetimeIndex(series.index)
    terms = terms_for_history(ForecastSettings(), dates)
    deterministic = terms.in_sample(dates).to_numpy()
    values = series.to_numpy(float)
    out = []
    for order in orders:
        reference = _seconds(
            lambda o=order: [
                fit_ar(values, o, deterministic, horizon=h, hold_back=o, engine="numpy")
                for h in range(1, HORIZON + 1)
            ],
            repeat=5,
        )
        joint = _seconds(
            lambda o=order: direct_regressions(values, o, HORIZON, deterministic), repeat=5
        )
        out.append((f"order {order}: one fit_ar per horizon (reference)", reference, 1.0))
        out.append((f"order {order}: solved together", joint, joint / reference))
    return out

"""How much admission history a forecast needs.

The same rule serves two places: the check that refuses a history too short for the
scenario (with a message saying how many days are needed and why), and the backtest, which
skips origins that leave too little training data for the fits it makes there.
"""

from __future__ import annotations

from pathlib import Path

import pandas as pd

from planner.errors import PlannerError

#: Days of history from which ``forecast.annual = "auto"`` switches the annual terms on.
ANNUAL_AUTO_DAYS = 730
#: Training days the forecast engine keeps before a backtest origin beyond max_lag + horizon.
BACKTEST_SPARE_DAYS = 30
#: Days of data beyond the number of coefficients that a fit is given, so it is not degenerate.
FIT_SPARE_DAYS = 14


def fit_lag(settings) -> tuple[int, str]:
    """The largest lag a fit uses and the key that sets it: the fixed ``order``, else
    ``max_lag``."""
    if settings.order is not None:
        return settings.order, "order"
    return settings.max_lag, "max_lag"


def fit_days(settings, forecast_days: int, history_days: int, direct: bool) -> tuple[int, str]:
    """Days a one-step fit (or, with ``direct``, a fit for every horizon day up to
    ``forecast_days``) needs: 2 x lag + k + 14 (+ forecast days), lag the fixed order or
    max_lag, k the calendar columns (a trend counted when it is asked for; one that
    ``trend = "auto"`` may choose fits within the spare days)."""
    lag, name = fit_lag(settings)
    annual = settings.annual is True or (
        settings.annual == "auto" and history_days >= ANNUAL_AUTO_DAYS
    )
    holiday = bool(settings.holiday_dates or settings.holiday_country)
    columns = (
        1 + 6 * bool(settings.weekday) + 2 * settings.fourier_pairs * annual
        + (settings.trend is True) + holiday
    )  # fmt: skip
    days = 2 * lag + columns + FIT_SPARE_DAYS
    reason = f"2 x {name} {lag} + {columns} calendar terms + {FIT_SPARE_DAYS} spare"
    if direct:
        return days + forecast_days, f"{reason} + {forecast_days} forecast days"
    return days, reason


def origin_days(settings, forecast_days: int, history_days: int) -> tuple[int, str]:
    """Training days a backtest origin needs before it: a direct fit's days, and at least
    max_lag + forecast days + 30."""
    days, reason = fit_days(settings, forecast_days, history_days, direct=True)
    floor = settings.max_lag + forecast_days + BACKTEST_SPARE_DAYS
    if floor > days:
        return floor, (
            f"max_lag {settings.max_lag} + {forecast_days} forecast days + {BACKTEST_SPARE_DAYS}"
        )
    return days, reason


def days_needed(settings, forecast_days: int, history_days: int) -> tuple[int, str]:
    """Fewest days of history the forecast accepts, and how that number is made up.

    ``settings`` is a ForecastSettings; ``forecast_days`` counts from the day after the
    history to the last forecast day. A one-step fit is given 2 x lag + k + 14 days (lag = the
    fixed order or max_lag, k = calendar columns, 14 spare days so the fit is not degenerate);
    a direct fit also the forecast days. With a backtest (strategy "auto" or backtest
    residuals) each of the backtest_origins origins, backtest_every days apart, needs a direct
    fit's days (and at least max_lag + forecast days + 30) before it.
    """
    if settings.strategy != "auto" and settings.residuals != "backtest":
        direct = settings.strategy == "direct"
        return fit_days(settings, forecast_days, history_days, direct)
    direct, direct_reason = origin_days(settings, forecast_days, history_days)
    backtest = settings.backtest_origins * settings.backtest_every
    return backtest + direct, (
        f"{settings.backtest_origins} backtest origins x {settings.backtest_every} days + "
        f"{direct} before the earliest origin = {direct_reason}"
    )


def check_history_length(
    admissions: pd.Series, settings, forecast_days: int, source: str | Path
) -> None:
    """Refuse a daily series too short for the forecast (see :func:`days_needed`)."""
    needed, reason = days_needed(settings, forecast_days, len(admissions))
    if len(admissions) < needed:
        raise PlannerError(
            f"{source}: history too short: {len(admissions)} days "
            f"({admissions.index[0].date()} to {admissions.index[-1].date()}), the forecast "
            f"needs at least {needed} ({reason}); give a longer history or lower "
            f"forecast.max_lag, horizon_weeks or forecast.backtest_origins"
        )

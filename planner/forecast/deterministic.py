"""Deterministic regressors of the admissions model, evaluated from the calendar date alone.

Columns (names as in the fitted coefficients):

- ``const``: 1 on every day.
- ``tuesday`` ... ``sunday``: day-of-week indicators, Monday is the baseline (6 columns).
- ``annual_sin_k``, ``annual_cos_k`` (k = 1..K): ``sin(2 pi k d / 365.25)`` and ``cos(...)``
  where ``d`` is the number of days since ``origin``; the annual cycle as K Fourier pairs.
- ``trend``: days since ``origin`` (a linear trend, units: days).
- ``holiday``: 1 on public holidays (given dates, or a country's holidays through the
  ``holidays`` package, imported only when asked for), else 0.
- ``level_change_YYYY-MM-DD``: a step, 0 before that date and 1 from it, one per declared
  level change inside the history (:mod:`planner.forecast.level_change`), so the fit
  estimates the level after it.

Because every column is a function of the date, ``in_sample`` (dates of the history) and
``out_of_sample`` (dates to forecast) give one consistent design: the same date always gets the
same row.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import date

import numpy as np
import pandas as pd

from planner.errors import PlannerError

ANNUAL_PERIOD_DAYS = 365.25
#: Name of a level change's step column: this prefix and the ISO date of its first day.
STEP_PREFIX = "level_change_"
WEEKDAY_NAMES = ("tuesday", "wednesday", "thursday", "friday", "saturday", "sunday")


@dataclass(frozen=True)
class DeterministicTerms:
    """Which deterministic columns the model uses.

    ``origin`` is day 0 of the trend and of the Fourier terms.
    """

    origin: pd.Timestamp
    constant: bool = True
    weekday: bool = True
    fourier_pairs: int = 0
    trend: bool = False
    holiday_dates: tuple[date, ...] = ()
    holiday_country: str | None = None
    level_changes: tuple[pd.Timestamp, ...] = ()

    @property
    def names(self) -> tuple[str, ...]:
        """Column names, in column order."""
        names: list[str] = ["const"] if self.constant else []
        if self.weekday:
            names += WEEKDAY_NAMES
        for k in range(1, self.fourier_pairs + 1):
            names += [f"annual_sin_{k}", f"annual_cos_{k}"]
        if self.trend:
            names.append("trend")
        if self.holiday_dates or self.holiday_country:
            names.append("holiday")
        names += [f"{STEP_PREFIX}{day.date().isoformat()}" for day in self.level_changes]
        return tuple(names)

    def in_sample(self, dates: pd.DatetimeIndex) -> pd.DataFrame:
        """The regressors on the history's dates (one row per day)."""
        return self._terms(dates)

    def out_of_sample(self, dates: pd.DatetimeIndex) -> pd.DataFrame:
        """The regressors on the days to forecast (one row per day)."""
        return self._terms(dates)

    def _terms(self, dates: pd.DatetimeIndex) -> pd.DataFrame:
        dates = pd.DatetimeIndex(dates).normalize()
        days = ((dates - self.origin.normalize()) / pd.Timedelta(days=1)).to_numpy(float)
        columns: list[np.ndarray] = []
        if self.constant:
            columns.append(np.ones(len(dates)))
        if self.weekday:
            weekday = dates.day_of_week.to_numpy()
            columns += [(weekday == d).astype(float) for d in range(1, 7)]
        for k in range(1, self.fourier_pairs + 1):
            angle = 2.0 * np.pi * k * days / ANNUAL_PERIOD_DAYS
            columns += [np.sin(angle), np.cos(angle)]
        if self.trend:
            columns.append(days)
        if self.holiday_dates or self.holiday_country:
            columns.append(self._holiday_indicator(dates))
        columns += [(dates >= day.normalize()).astype(float) for day in self.level_changes]
        matrix = np.column_stack(columns) if columns else np.empty((len(dates), 0))
        return pd.DataFrame(matrix, index=dates, columns=list(self.names))

    def _holiday_indicator(self, dates: pd.DatetimeIndex) -> np.ndarray:
        holiday_days = {pd.Timestamp(d) for d in self.holiday_dates}
        if self.holiday_country:
            holiday_days |= {pd.Timestamp(d) for d in country_holidays(self.holiday_country, dates)}
        return dates.isin(list(holiday_days)).astype(float)


def country_holidays(country: str, dates: pd.DatetimeIndex) -> list[date]:
    """Public holidays of ``country`` (ISO code, e.g. "GB") in the years spanned by ``dates``."""
    import holidays  # lazily: only scenarios that ask for holidays pay for the import

    years = range(int(dates.year.min()), int(dates.year.max()) + 1) if len(dates) else range(0)
    try:
        calendar = holidays.country_holidays(country, years=years)
    except NotImplementedError:
        raise PlannerError(f"holiday_country: unknown country code {country!r}") from None
    return list(calendar.keys())


def step_columns(names) -> list[int]:
    """Positions of the level changes' step columns among the column ``names``."""
    return [i for i, name in enumerate(names or ()) if name.startswith(STEP_PREFIX)]


def terms_for_history(settings, dates: pd.DatetimeIndex) -> DeterministicTerms:
    """Resolve ``settings`` (ForecastSettings) against the history's dates: ``annual="auto"``
    switches the Fourier terms on with at least two years (730 days) of history; a step column
    for each level change dated after the first day and on or before the last."""
    annual = settings.annual
    if annual == "auto":
        annual = len(dates) >= 730
    first, last = pd.Timestamp(dates[0]), pd.Timestamp(dates[-1])
    steps = sorted(
        pd.Timestamp(change.date)
        for change in settings.level_changes
        if first < pd.Timestamp(change.date) <= last
    )
    return DeterministicTerms(
        origin=pd.Timestamp(dates[0]),
        constant=True,
        weekday=bool(settings.weekday),
        fourier_pairs=int(settings.fourier_pairs) if annual else 0,
        trend=bool(settings.trend),
        holiday_dates=tuple(settings.holiday_dates),
        holiday_country=settings.holiday_country,
        level_changes=tuple(steps),
    )

"""Deterministic regressors of the admissions model, evaluated from the calendar date alone.

Columns (names as in the fitted coefficients):

- ``const``: 1 on every day.
- ``tuesday`` ... ``sunday``: day-of-week indicators, Monday is the baseline (6 columns).
- ``annual_sin_k``, ``annual_cos_k`` (k = 1..K): ``sin(2 pi k d / 365.25)`` and ``cos(...)``
  where ``d`` is the number of days since ``origin``; the annual cycle as K Fourier pairs.
- ``trend``: years (of 365.25 days) since ``trend_origin`` (a linear trend; in years, not
  days, so that its column is of the size of the others and the normal equations stay well
  conditioned: the coefficient is admissions per day per year); the history's middle
  day for a forecast (:func:`terms_for_history`), so that the constant is the level there and
  the trend coefficient's sampling error is nearly uncorrelated with it (each path draws that
  coefficient alone: :mod:`planner.forecast.level_uncertainty`).
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

from dataclasses import dataclass, replace
from datetime import date

import numpy as np
import pandas as pd

from planner.errors import PlannerError
from planner.forecast.ar import select_order

ANNUAL_PERIOD_DAYS = 365.25
#: Name of a level change's step column: this prefix and the ISO date of its first day.
STEP_PREFIX = "level_change_"
WEEKDAY_NAMES = ("tuesday", "wednesday", "thursday", "friday", "saturday", "sunday")


@dataclass(frozen=True)
class DeterministicTerms:
    """Which deterministic columns the model uses.

    ``origin`` is day 0 of the Fourier terms, and of the trend unless ``trend_origin`` is
    given.
    """

    origin: pd.Timestamp
    constant: bool = True
    weekday: bool = True
    fourier_pairs: int = 0
    trend: bool = False
    holiday_dates: tuple[date, ...] = ()
    holiday_country: str | None = None
    level_changes: tuple[pd.Timestamp, ...] = ()
    trend_origin: pd.Timestamp | None = None

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
            start = self.origin if self.trend_origin is None else self.trend_origin
            days_since = ((dates - start.normalize()) / pd.Timedelta(days=1)).to_numpy(float)
            columns.append(days_since / ANNUAL_PERIOD_DAYS)
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


def drawn_columns(names) -> list[int]:
    """Positions of the columns whose coefficients each path draws from their sampling
    distribution: the trend and the level changes' steps."""
    names = tuple(names or ())
    return sorted(step_columns(names) + [i for i, name in enumerate(names) if name == "trend"])


def terms_for_history(settings, dates: pd.DatetimeIndex, values=None) -> DeterministicTerms:
    """Resolve ``settings`` (ForecastSettings) against the history's dates: ``annual="auto"``
    switches the Fourier terms on with at least two years (730 days) of history; a step column
    for each level change dated after the first day and on or before the last; the trend
    centred on the history's middle day, and with ``trend="auto"`` only when the admissions
    ``values`` choose it (:func:`trend_chosen`; without ``values``, left out)."""
    annual = settings.annual
    if annual == "auto":
        annual = len(dates) >= 730
    first, last = pd.Timestamp(dates[0]), pd.Timestamp(dates[-1])
    steps = sorted(
        pd.Timestamp(change.date)
        for change in settings.level_changes
        if first < pd.Timestamp(change.date) <= last
    )
    terms = DeterministicTerms(
        origin=pd.Timestamp(dates[0]),
        constant=True,
        weekday=bool(settings.weekday),
        fourier_pairs=int(settings.fourier_pairs) if annual else 0,
        trend=settings.trend is True,
        holiday_dates=tuple(settings.holiday_dates),
        holiday_country=settings.holiday_country,
        level_changes=tuple(steps),
        trend_origin=pd.Timestamp(dates[len(dates) // 2]),
    )
    if settings.trend == "auto" and values is not None:
        return replace(terms, trend=trend_chosen(values, dates, terms, settings))
    return terms


def trend_chosen(values, dates: pd.DatetimeIndex, terms: DeterministicTerms, settings) -> bool:
    """Whether a linear trend lowers the information criterion (``settings.criterion``) of the
    one-step model: the orders ``min_lag .. max_lag`` (or the fixed order) are compared with
    and without the trend column on ONE common sample, the rows after ``max_lag`` (as the
    order choice does, :func:`planner.forecast.ar.select_order`), and the best of each is
    taken. Columns that are zero on every day (a holiday list outside the history) are left
    out of both."""
    without = replace(terms, trend=False).in_sample(dates)
    without = without.loc[:, without.abs().sum() > 0].to_numpy()
    with_trend = replace(terms, trend=True).in_sample(dates)["trend"].to_numpy()
    lag = settings.max_lag if settings.order is None else settings.order
    low = settings.min_lag if settings.order is None else settings.order
    best = []
    for deterministic in (without, np.column_stack([without, with_trend])):
        table = select_order(values, lag, deterministic, settings.criterion, low).table
        best.append(float(table[settings.criterion].min()))
    return best[1] < best[0]

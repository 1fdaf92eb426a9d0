"""Calendar regressors, seasonal naive and demand adjustments."""

from datetime import date

import numpy as np
import pandas as pd
import pytest

from planner.errors import PlannerError
from planner.forecast.adjust import demand_multipliers
from planner.forecast.deterministic import DeterministicTerms, terms_for_history
from planner.forecast.naive import seasonal_naive_errors, seasonal_naive_point
from planner.forecast.settings import DemandAdjustment, ForecastSettings, Surge


def test_weekday_dummies_have_a_monday_baseline():
    dates = pd.date_range("2024-01-01", periods=14, freq="D")  # 2024-01-01 was a Monday
    frame = DeterministicTerms(origin=dates[0]).in_sample(dates)
    assert list(frame.columns[1:]) == [
        "tuesday",
        "wednesday",
        "thursday",
        "friday",
        "saturday",
        "sunday",
    ]
    assert frame.iloc[0, 1:].sum() == 0  # Monday: all dummies off
    assert frame.loc["2024-01-07", "sunday"] == 1 and frame.loc["2024-01-07"].sum() == 2


def test_fourier_terms_have_an_annual_period():
    origin = pd.Timestamp("2020-01-01")
    terms = DeterministicTerms(origin=origin, weekday=False, fourier_pairs=2)
    frame = terms.out_of_sample(pd.DatetimeIndex([origin, origin + pd.Timedelta(days=91)]))
    # Day 0: sin 0 = 0, cos 0 = 1; day 91: sin(2 pi 91 / 365.25) = 0.99997 (by hand).
    np.testing.assert_allclose(frame.iloc[0, 1:], [0, 1, 0, 1], atol=1e-12)
    assert frame["annual_sin_1"].iloc[1] == pytest.approx(np.sin(2 * np.pi * 91 / 365.25))
    assert frame["annual_cos_2"].iloc[1] == pytest.approx(np.cos(4 * np.pi * 91 / 365.25))


def test_holidays_by_date_and_by_country():
    dates = pd.date_range("2024-12-20", periods=14, freq="D")
    given = DeterministicTerms(origin=dates[0], holiday_dates=(date(2024, 12, 24),))
    assert given.in_sample(dates)["holiday"].sum() == 1
    # Source: from memory: in Great Britain 25 and 26 December and 1 January are holidays.
    country = DeterministicTerms(origin=dates[0], holiday_country="GB").in_sample(dates)
    marked = set(country.index[country["holiday"] == 1].strftime("%m-%d"))
    assert {"12-25", "12-26", "01-01"} <= marked
    with pytest.raises(PlannerError, match="holiday_country"):
        DeterministicTerms(origin=dates[0], holiday_country="XX").in_sample(dates)


def test_annual_auto_needs_two_years():
    short = pd.date_range("2020-01-01", periods=729, freq="D")
    long = pd.date_range("2020-01-01", periods=730, freq="D")
    assert terms_for_history(ForecastSettings(), short).fourier_pairs == 0
    assert terms_for_history(ForecastSettings(), long).fourier_pairs == 3


def test_seasonal_naive_repeats_last_week():
    values = np.arange(1.0, 22.0)  # 1 .. 21; last week = 15 .. 21
    np.testing.assert_array_equal(
        seasonal_naive_point(values, 9), [15, 16, 17, 18, 19, 20, 21, 15, 16]
    )
    errors = seasonal_naive_errors(values, 3)
    # origin 7: actual 8, 9, 10 vs 1, 2, 3 -> errors 7 each
    np.testing.assert_array_equal(errors[0], [7, 7, 7])


def test_demand_growth_and_surges_multiply():
    dates = pd.date_range("2025-01-01", periods=5, freq="D")
    demand = DemandAdjustment(
        growth=0.1,
        surges=(
            Surge(date(2025, 1, 2), date(2025, 1, 3), 1.5),
            Surge(date(2025, 1, 3), date(2025, 1, 3), 2.0),
        ),
    )
    # 1.1 on every day; x1.5 on 2-3 Jan; x2 more on 3 Jan.
    np.testing.assert_allclose(demand_multipliers(dates, demand), [1.1, 1.65, 3.3, 1.1, 1.1])

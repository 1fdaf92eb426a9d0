"""forecast_admissions and run_backtest end to end on synthetic daily admissions."""

import numpy as np
import pandas as pd
import pytest

from planner.errors import PlannerError
from planner.forecast.pipeline import forecast_admissions, run_backtest
from planner.forecast.settings import DemandAdjustment, ForecastSettings

HORIZON = 91
QUANTILE_COLUMNS = ["q05", "q10", "q25", "q50", "q75", "q90", "q95"]


def synthetic_admissions(seed=1, days=1278):
    """Poisson admissions, mean ~5/day: weekends 0.78 of weekdays (BMC Health Serv. Res. 12
    (2012) 87, REFERENCES.md), a winter peak of +15% in mid-January, 3.5 years."""
    rng = np.random.default_rng(seed)
    dates = pd.date_range("2021-01-04", periods=days, freq="D")
    weekend = np.where(dates.day_of_week >= 5, 0.78, 1.0)
    winter = 1 + 0.15 * np.cos(2 * np.pi * (dates.day_of_year.to_numpy() - 15) / 365.25)
    return pd.Series(rng.poisson(5.0 * weekend * winter), index=dates, name="admissions")


@pytest.fixture(scope="module")
def history():
    return synthetic_admissions()


@pytest.fixture(scope="module")
def auto_result(history):
    return forecast_admissions(history, ForecastSettings(), HORIZON, 1000, np.random.default_rng(7))


QUICK = ForecastSettings(max_lag=14, backtest_origins=4)


def test_auto_picks_the_lower_pinball_loss(auto_result):
    overall = auto_result.summary.backtest.overall()
    best = overall.loc[["recursive", "direct"], "pinball"].idxmin()
    assert auto_result.summary.strategy == best
    assert auto_result.summary.backtest_pinball["recursive"] == overall.loc["recursive", "pinball"]


def test_backtest_table_layout(auto_result):
    table = auto_result.summary.backtest.table
    assert set(table["strategy"]) == {"recursive", "direct", "seasonal_naive"}
    assert sorted(set(table["horizon_week"])) == list(range(0, 14))  # 0 = all weeks
    # 26 origins over the last 182 days, truncated at the end of the history: week 1 is
    # scored on 26 origins x 7 days; the overall row on sum_k min(91, 7k) days.
    week1 = table[(table["strategy"] == "direct") & (table["horizon_week"] == 1)]
    assert int(week1["days"].iloc[0]) == 26 * 7
    overall = table[(table["strategy"] == "direct") & (table["horizon_week"] == 0)]
    assert int(overall["days"].iloc[0]) == sum(min(91, 7 * k) for k in range(1, 27))


def test_model_beats_seasonal_naive_on_weekday_poisson(auto_result):
    # For independent Poisson counts the seasonal naive error is the difference of two Poisson
    # days (variance 2 lambda), a model of the mean has error variance ~ lambda, so its MASE
    # should be clearly lower (expected ratio about 1/sqrt(2)).
    overall = auto_result.summary.backtest.overall()
    assert overall.loc["recursive", "mase"] < 0.85 * overall.loc["seasonal_naive", "mase"]
    assert 0.7 <= overall.loc["recursive", "coverage_80"] <= 0.97


def test_paths_are_non_negative_integers(auto_result):
    paths = auto_result.paths
    assert paths.shape == (1000, HORIZON) and paths.dtype == np.int64
    assert (paths >= 0).all()
    np.testing.assert_allclose(auto_result.mean, paths.mean(axis=0))


def test_forecast_level_and_weekday_pattern(auto_result, history):
    # The synthetic truth in summer is ~5 * (1 + 0.15 cos(...)) on weekdays; check the ratio of
    # weekend to weekday means against the 0.78 built into the data. Source: known process
    # generated here. Tolerance: the ratio estimated from 364 weekend and 914 weekday Poisson
    # days (means ~3.9 and ~5) has SE 0.78 sqrt(1 / (364 x 3.9) + 1 / (914 x 5)) = 0.024;
    # the model's weekday terms are additive (a difference of about -1.1 admissions fitted over
    # the whole year), which on the lower summer-autumn level gives a ratio a little below
    # the multiplicative truth (measured 0.716 with either spread). Asked: within 4 SE.
    table = auto_result.table()
    weekend = table["date"].dt.day_of_week >= 5
    ratio = table.loc[weekend, "mean"].mean() / table.loc[~weekend, "mean"].mean()
    assert ratio == pytest.approx(0.78, abs=4 * 0.024)


def test_tables_have_the_documented_columns(auto_result):
    table = auto_result.table()
    assert list(table.columns) == ["date", "mean"] + QUANTILE_COLUMNS
    assert len(table) == HORIZON and table["date"].iloc[0] == pd.Timestamp("2024-07-05")
    assert (np.diff(table[QUANTILE_COLUMNS].to_numpy(), axis=1) >= 0).all()


def test_summary_records_the_fit(auto_result):
    summary = auto_result.summary
    assert 1 <= summary.order <= 28
    assert "saturday" in summary.coefficients and "annual_cos_1" in summary.coefficients
    # The saturday coefficient should be near 5 * (0.78 - 1) = -1.1 admissions (loose).
    assert summary.coefficients["saturday"] == pytest.approx(-1.1, abs=0.4)
    assert summary.aic < summary.bic and summary.sigma2 > 0


def test_same_seed_same_paths(history):
    first = forecast_admissions(history, QUICK, 28, 200, np.random.default_rng(3))
    second = forecast_admissions(history, QUICK, 28, 200, np.random.default_rng(3))
    other = forecast_admissions(history, QUICK, 28, 200, np.random.default_rng(4))
    np.testing.assert_array_equal(first.paths, second.paths)
    assert not np.array_equal(first.paths, other.paths)


def test_start_after_a_gap_drops_the_gap(history):
    settings = ForecastSettings(strategy="recursive", max_lag=14)
    start = history.index[-1] + pd.Timedelta(days=11)
    result = forecast_admissions(history, settings, 14, 100, np.random.default_rng(1), start)
    assert result.dates[0] == start and len(result.dates) == 14
    with pytest.raises(PlannerError, match="start"):
        forecast_admissions(history, settings, 14, 100, np.random.default_rng(1), history.index[-1])


def test_growth_scales_the_mean(history):
    base = ForecastSettings(strategy="recursive", max_lag=14)
    grown = ForecastSettings(strategy="recursive", max_lag=14, demand=DemandAdjustment(growth=0.2))
    a = forecast_admissions(history, base, 28, 4000, np.random.default_rng(2))
    b = forecast_admissions(history, grown, 28, 4000, np.random.default_rng(2))
    # Same seed, same continuous paths: the adjusted mean is 1.2x up to the clipping at 0 and
    # the rounding noise (SE of a 28-day mean over 4000 paths ~ 0.01).
    assert b.mean.mean() / a.mean.mean() == pytest.approx(1.2, abs=0.02)


@pytest.mark.parametrize(
    "options",
    [
        {"residuals": "backtest", "backtest_origins": 50, "backtest_every": 3},
        {"refit": True},
        # the direct strategy resamples one error path per origin and asks for at least 50
        {"strategy": "direct", "residuals": "backtest", "backtest_origins": 50},
    ],
)
def test_options_run_and_give_counts(history, options):
    settings = ForecastSettings(max_lag=14, **options)
    result = forecast_admissions(history, settings, 28, 300, np.random.default_rng(5))
    assert result.paths.shape == (300, 28) and (result.paths >= 0).all()
    assert result.summary.residuals == settings.residuals


def test_run_backtest_public_entry(history):
    backtest = run_backtest(history, QUICK, 14, 100, np.random.default_rng(0))
    assert len(backtest.origins) == 4
    assert {
        "mae",
        "rmse",
        "mase",
        "pinball",
        "coverage_80",
        "coverage_95",
        "interval_score_80",
    } <= set(backtest.table.columns)

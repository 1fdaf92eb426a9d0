"""A trend chosen by the data (forecast.trend = "auto") and its uncertainty in the paths."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm

from planner.forecast.ar import design, fit_selected
from planner.forecast.deterministic import drawn_columns, terms_for_history
from planner.forecast.level_uncertainty import drawn_deterministic, recursive_covariances
from planner.forecast.pipeline import forecast_admissions, observed_columns
from planner.forecast.settings import ForecastSettings, LevelChange

WEEKDAY_MEANS = np.array([22.0, 21.0, 20.0, 20.0, 21.0, 17.0, 16.0])


def admissions(seed: int, growth_per_year: float, days: int = 3 * 364) -> pd.Series:
    """Poisson days around a weekday pattern (mean 19.6), growing by ``growth_per_year``
    (0.05 = 5% a year, compounded daily). Source: known process generated here."""
    dates = pd.date_range("2023-01-02", periods=days, freq="D")
    years = np.arange(days) / 365.25
    expected = WEEKDAY_MEANS[dates.day_of_week] * (1 + growth_per_year) ** years
    counts = np.random.default_rng(seed).poisson(expected)
    return pd.Series(counts, index=dates, name="admissions")


def test_auto_takes_a_trend_where_demand_grows_and_leaves_it_out_where_flat():
    # 5% a year over 3 years is +0.98 admissions a day a year: its t-statistic on 1,092 Poisson
    # days is about 10, so every series chooses it. Flat series: the information criterion
    # admits a useless trend when its squared t-statistic exceeds 2 (AIC), about one series in
    # six (P(chi2_1 > 2) = 0.157); with BIC (log 1064 = 7.0) about one in 120 (0.008). Eight
    # seeds each: all growing ones must choose it; of the flat ones at most 4 with AIC
    # (binomial P(>= 5 of 8) = 0.001) and at most 1 with BIC (P(>= 2 of 8) = 0.002). Measured:
    # 1 and 1 (seed 0, whose trend t-statistic is -3.0).
    chosen = {"aic": 0, "bic": 0}
    for seed in range(8):
        grown = admissions(seed, 0.05)
        assert terms_for_history(ForecastSettings(), grown.index, grown.to_numpy(float)).trend
        flat = admissions(seed, 0.0)
        for criterion in chosen:
            settings = ForecastSettings(max_lag=14, criterion=criterion)
            chosen[criterion] += terms_for_history(settings, flat.index, flat.to_numpy(float)).trend
    assert chosen["aic"] <= 4 and chosen["bic"] <= 1
    # true and false are kept as they are; without the values "auto" cannot choose.
    grown = admissions(0, 0.05)
    assert not terms_for_history(ForecastSettings(trend=False), grown.index, grown).trend
    assert terms_for_history(ForecastSettings(trend=True), grown.index).trend
    assert not terms_for_history(ForecastSettings(), grown.index).trend


def test_auto_compares_with_and_without_the_trend_on_one_sample():
    # Source: the criterion of each candidate refitted by plain OLS (statsmodels) on the rows
    # after max_lag, with and without the trend column: the choice is the lower of the best.
    series = admissions(3, 0.02)
    values, dates = series.to_numpy(float), series.index
    settings = ForecastSettings(max_lag=7, criterion="aic")
    terms = terms_for_history(ForecastSettings(max_lag=7, trend=True), dates)
    frame = terms.in_sample(dates)
    best = {}
    for label, columns in (("without", [c for c in frame if c != "trend"]), ("with", frame)):
        scores = []
        for order in range(1, 8):
            X, y = design(values, order, frame[list(columns)].to_numpy(), 1, hold_back=7)
            result = sm.OLS(y, X).fit()
            scores.append(-2 * result.llf + 2 * (X.shape[1] + 1))
        best[label] = min(scores)
    chosen = terms_for_history(settings, dates, values).trend
    assert chosen == (best["with"] < best["without"])


def test_the_trend_and_a_step_are_drawn_with_their_ols_covariance():
    # Source: statsmodels OLS(y, X).fit().cov_params(), the reference library. The draws'
    # sample covariance must match it: each entry within 4 SE, the SE of a sample covariance
    # of N bivariate normal draws being sqrt((s_ii s_jj + s_ij^2) / N).
    series = admissions(5, 0.05)
    values, dates = series.to_numpy(float), series.index
    change = dates[-120]
    settings = ForecastSettings(max_lag=7, trend=True, level_changes=(LevelChange(change),))
    terms = terms_for_history(settings, dates, values)
    names = observed_columns(terms, dates)
    deterministic = terms.in_sample(dates)[list(names)].to_numpy()
    fit = fit_selected(values, 7, deterministic, names, engine="numpy")
    drawn = drawn_columns(names)
    assert [names[j] for j in drawn] == ["trend", f"level_change_{change.date().isoformat()}"]
    X, y = design(values, fit.order, deterministic)
    reference = np.asarray(sm.OLS(y, X).fit().cov_params())
    covariance = recursive_covariances(fit, values, deterministic)
    np.testing.assert_allclose(covariance, reference, rtol=1e-6, atol=1e-12)
    n = 40000
    draws = drawn_deterministic(fit, values, deterministic, drawn, n, np.random.default_rng(1))
    sample = np.cov(draws[:, drawn].T)
    block = reference[np.ix_(drawn, drawn)]
    se = np.sqrt((np.outer(np.diag(block), np.diag(block)) + block**2) / n)
    assert np.all(np.abs(sample - block) < 4 * se)
    # The trend and a step 120 days before the end are partly collinear: correlation < 0.
    assert block[0, 1] / np.sqrt(block[0, 0] * block[1, 1]) < -0.3


@pytest.mark.parametrize("strategy", ["recursive", "direct"])
def test_a_growing_series_is_forecast_at_its_new_level(strategy):
    # Source: known process generated here: +5% a year, so the next 4 weeks' true mean is
    # 19.57 x 1.05^(3 years + ~2 weeks) = 22.7 admissions a day. With "auto" the trend is
    # chosen and the mean of the paths must be within 3 SE of the truth, SE the trend's
    # extrapolation error (OLS, about 0.3 admissions a day at 1.5 years from the history's
    # middle) and the paths' Monte Carlo error. (Here the 28 lags follow much of the growth
    # without the trend too: measured 22.5 / 23.1 with trend = false.)
    series = admissions(11, 0.05)
    horizon, n_paths = 28, 2000
    auto = forecast_admissions(
        series, ForecastSettings(strategy=strategy), horizon, n_paths, np.random.default_rng(2)
    )
    assert auto.summary.trend
    years = (len(series) + np.arange(horizon)) / 365.25
    truth = np.mean(WEEKDAY_MEANS[auto.dates.day_of_week] * 1.05**years)
    se = np.hypot(0.3, auto.paths.mean(axis=1).std() / np.sqrt(n_paths))
    assert auto.paths.mean() == pytest.approx(truth, abs=3 * se)
    off = ForecastSettings(strategy=strategy, trend=False)
    assert not forecast_admissions(series, off, 7, 10, np.random.default_rng(2)).summary.trend

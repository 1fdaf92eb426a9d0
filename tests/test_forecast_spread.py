"""Spread that follows the level (planner.forecast.spread): the level-scaled bootstrap against
its closed-form variances, the weekday variances of Poisson counts, and the mean kept."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from planner.forecast.ar import constant_only
from planner.forecast.deterministic import DeterministicTerms
from planner.forecast.paths import SeriesDesign, model_paths
from planner.forecast.pipeline import forecast_admissions
from planner.forecast.settings import ForecastSettings
from planner.forecast.spread import FLOOR, error_paths_on_scale, pool_on_scale, standardised

HORIZON = 14


def ar1_around(level: float, phi: float, n: int, seed: int) -> np.ndarray:
    """An AR(1) around ``level`` whose shocks have variance equal to the day's expected value
    (a Poisson-like spread). Source: known process generated here."""
    rng = np.random.default_rng(seed)
    x = np.full(n + 200, level)
    for t in range(1, n + 200):
        expected = level + phi * (x[t - 1] - level)
        x[t] = expected + np.sqrt(expected) * rng.standard_normal()
    return x[200:]


def test_level_scaled_paths_match_their_closed_form_variances():
    # Closed form: with shocks z sqrt(m_t) (z centred, variance s2 over the standardised pool,
    # drawn independently of the path so far), the shocks are uncorrelated with variance
    # s2 E[m_t], and E[m_t] is the point forecast (the mean is kept). So the h-step variance is
    # s2 sum_{j<h} psi_j^2 point[h-j] and that of the 7-day total s2 sum_i point[i]
    # (sum_{j<=7-i} psi_j)^2: the Box-Jenkins psi-weight sums (Box, Jenkins, Reinsel & Ljung,
    # 5th ed., ch. 5) with each shock's variance scaled by its expected level (law of total
    # variance). Levels here stay far above FLOOR, so the floor never binds.
    # Tolerance: a variance from N independent paths has relative SE sqrt(2 / (N - 1)) for a
    # Gaussian; with a pool of heavier tails take 4 x that, plus the Gaussian approximation.
    n, n_paths = 3000, 20000
    x = ar1_around(40.0, 0.6, n, seed=11)
    settings = ForecastSettings(order=1, spread="level")
    result = model_paths(
        "recursive",
        SeriesDesign(x, constant_only(n), np.ones((HORIZON, 1))),
        settings,
        n_paths,
        np.random.default_rng(12),
    )
    phi = result.one_step.lag_coefficients[0]
    pool = pool_on_scale(x, result.one_step.residuals, "level")
    s2 = np.var(pool)
    psi = phi ** np.arange(HORIZON)
    point = result.point
    rel_se = np.sqrt(2 / (n_paths - 1))
    for h in (1, 2, 7, HORIZON):
        expected = s2 * np.sum(psi[:h] ** 2 * point[h - 1 :: -1][:h])
        assert np.var(result.paths[:, h - 1], ddof=1) == pytest.approx(expected, rel=5 * rel_se)
    weekly = result.paths[:, :7].sum(axis=1)
    expected = s2 * sum(point[i - 1] * np.sum(psi[: 7 - i + 1]) ** 2 for i in range(1, 8))
    assert np.var(weekly, ddof=1) == pytest.approx(expected, rel=5 * rel_se)
    # The mean is kept: paths' mean equals the point forecast within 4 Monte Carlo SEs.
    se = result.paths.std(axis=0, ddof=1) / np.sqrt(n_paths)
    assert np.all(np.abs(result.paths.mean(axis=0) - point) < 4 * se)


@pytest.fixture(scope="module")
def weekday_poisson():
    # Source: known process generated here: independent Poisson days, Monday 22 .. Sunday 16.
    means = np.array([22.0, 21.0, 20.0, 20.0, 21.0, 17.0, 16.0])
    dates = pd.date_range("2023-01-02", periods=3 * 364, freq="D")
    counts = np.random.default_rng(21).poisson(means[dates.day_of_week]).astype(float)
    terms = DeterministicTerms(origin=dates[0])
    future = pd.date_range(dates[-1] + pd.Timedelta(days=1), periods=HORIZON, freq="D")
    design = SeriesDesign(
        counts,
        terms.in_sample(dates).to_numpy(),
        terms.out_of_sample(future).to_numpy(),
        terms.names,
    )
    return means, future, design


@pytest.mark.parametrize("strategy", ["recursive", "direct"])
def test_a_quiet_weekend_spreads_less_than_a_busy_monday(weekday_poisson, strategy):
    # Poisson days: the variance of a day is its mean (22 on Mondays, 16 on Sundays). With
    # order 0 the paths' variance of a day is the pool's (standardised) variance times the
    # day's level. Tolerance: relative SE of a variance from N paths sqrt(2 / (N - 1)) plus
    # that of the pool's variance, sqrt(2 / n) for n = 1092 days (Poisson with mean ~20 is
    # near Gaussian); asked within 4 SE. The constant spread gives every weekday the pooled
    # variance (~19.6) instead: it misses the Monday and Sunday variances by 12-18%.
    means, future, design = weekday_poisson
    n_paths = 20000
    rel_se = np.sqrt(2 / (n_paths - 1) + 2 / design.values.shape[0])
    found = {}
    for spread in ("level", "constant"):
        settings = ForecastSettings(order=0, spread=spread)
        paths = model_paths(strategy, design, settings, n_paths, np.random.default_rng(5)).paths
        found[spread] = {d: paths[:, future.day_of_week == d].var(axis=0).mean() for d in (0, 6)}
    for day in (0, 6):
        truth = means[day]
        assert found["level"][day] == pytest.approx(truth, rel=4 * rel_se)
    assert found["level"][0] / found["level"][6] == pytest.approx(22 / 16, rel=6 * rel_se)
    assert abs(found["constant"][0] / found["constant"][6] - 1.0) < 6 * rel_se


def test_standardised_errors_use_the_fitted_level_with_a_floor():
    values = np.array([4.0, 9.0, 0.0, 1.0])
    pool = np.array([-5.0, 0.0, 1.0])  # fitted levels 14, 0 + floor, 0 (floored)
    np.testing.assert_allclose(
        pool_on_scale(values, pool, "level"),
        [-5.0 / np.sqrt(14.0), 0.0, 1.0 / np.sqrt(FLOOR)],
    )
    np.testing.assert_array_equal(pool_on_scale(values, pool, "constant"), pool)
    # Error paths of origins at days 1 and 2 over 3 days: the later one runs past the end.
    errors = np.array([[1.0, -1.0, 0.5], [2.0, -0.5, np.nan]])
    scaled = error_paths_on_scale(values, errors, np.array([1, 2]), "level")
    expected = errors / np.sqrt(np.maximum([[8.0, 1.0, 0.5], [-2.0, 1.5, 1.0]], FLOOR))
    np.testing.assert_allclose(scaled, expected)
    assert np.isnan(standardised(np.nan, 3.0))


def spread_series(seed: int, poisson: bool) -> pd.Series:
    """Two years of daily admissions, weekday means from 4 (Sunday) to 40 (Monday): Poisson
    counts, or the mean plus normal noise of one variance (the Poisson variance at the
    average level, 20). Source: known process generated here."""
    means = np.array([40.0, 32.0, 26.0, 20.0, 12.0, 6.0, 4.0])
    dates = pd.date_range("2024-01-01", periods=2 * 364, freq="D")
    expected = means[dates.day_of_week]
    rng = np.random.default_rng(seed)
    counts = rng.poisson(expected) if poisson else expected + rng.normal(0, np.sqrt(20), 728)
    return pd.Series(counts, index=dates, name="admissions")


@pytest.mark.parametrize(("poisson", "expected"), [(True, "level"), (False, "constant")])
def test_auto_chooses_the_spread_of_the_process(poisson, expected):
    # Source: known processes generated here. A Monday of 40 has ten times the Poisson variance
    # of a Sunday of 4: over the backtest's 182 days the level-scaled quantiles score clearly
    # better (measured mean pinball 0.95 against 1.02 over three series); with one variance the
    # constant spread wins (1.06 against 1.12). Every one of the three series each must be
    # chosen right.
    settings = ForecastSettings(max_lag=7, backtest_paths=10)
    for seed in range(3):
        result = forecast_admissions(
            spread_series(seed, poisson), settings, 14, 20, np.random.default_rng(seed)
        )
        assert result.summary.backtest.spread == expected
        assert result.summary.spread == expected
        losses = result.summary.backtest.spread_pinball
        assert losses[expected] < losses["level" if expected == "constant" else "constant"]


def test_auto_without_a_backtest_is_level():
    settings = ForecastSettings(max_lag=7, strategy="recursive")
    series = spread_series(0, False)
    result = forecast_admissions(series, settings, 14, 20, np.random.default_rng(0))
    assert result.summary.backtest is None and result.summary.spread == "level"

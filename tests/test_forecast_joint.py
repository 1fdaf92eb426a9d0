"""Forecasts of several wards drawn together (planner.forecast.joint) on a known process: three
wards of one invented hospital whose daily admissions share a day effect.

Ward ``w`` on day ``t`` admits Poisson(mu_w s_t L_t): ``s_t`` a weekday shape common to the
hospital, ``L_t`` a lognormal day effect common to all wards (mean 1, log-sd 0.2), independent
from day to day. Given the weekday, the counts of two wards then have covariance
mu_a mu_b Var(L) and variances mu + mu^2 Var(L) (Source: law of total covariance for a Poisson
mixture, Var(Y) = E[Var(Y | L)] + Var(E[Y | L]); standard), a correlation of about 0.3-0.45 for
the means here. The process has no dependence from day to day, so a day's one-step innovation
is its count minus its weekday's mean: the reference correlation is that of the
de-seasonalised counts (each ward's count minus its weekday mean), computed here from the
data alone rather than from the forecast's own residuals, so the forecast is not held to
itself.

Correlation of the paths: each day's mean over paths is removed and the pairs of all paths
and days are pooled. Sampling errors by Fisher's z-transform, SE 1/sqrt(n - 3) for n
independent pairs (Source: Fisher (1921), Metron 1, 3-32, z = atanh r). The days of a path are
nearly independent (the fitted lag coefficients of this process are small), so the pooled
pairs count as paths x days.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from planner.errors import PlannerError
from planner.forecast.joint import (
    LEAST_COMMON_DAYS,
    LEAST_COMMON_ORIGINS,
    SharedUniforms,
    forecast_wards,
    shared_choices,
)
from planner.forecast.pipeline import forecast_admissions
from planner.forecast.rows import PoolRows, SharedRows
from planner.forecast.settings import ForecastSettings

START = pd.Timestamp("2022-01-03")  # a Monday
DAYS = 3 * 364
#: Expected admissions per day of each ward on an average weekday, and the hospital's weekday
#: shape (Monday .. Sunday, mean 1): invented, quieter weekends.
MEANS = (20.0, 14.0, 9.0)
SHAPE = np.array([1.12, 1.06, 1.02, 1.02, 1.04, 0.88, 0.86])
DAY_SD = 0.2  # log-sd of the common day effect
HORIZON, PATHS = 14, 400
QUICK = ForecastSettings(strategy="recursive", max_lag=7)


def hospital(seed: int = 11, days: int = DAYS) -> list[pd.Series]:
    """Daily admissions of the three wards (see the module docstring)."""
    rng = np.random.default_rng(seed)
    dates = pd.date_range(START, periods=days, freq="D")
    day_effect = np.exp(DAY_SD * rng.standard_normal(days) - DAY_SD**2 / 2)
    shape = SHAPE[dates.day_of_week] * day_effect
    return [pd.Series(rng.poisson(mean * shape), index=dates) for mean in MEANS]


def true_correlation(a: int, b: int) -> float:
    """Correlation of the de-seasonalised counts of wards a and b (weekdays equally often)."""
    v = np.exp(DAY_SD**2) - 1  # Var(L) for a lognormal of mean 1
    ma, mb = MEANS[a] * SHAPE, MEANS[b] * SHAPE
    cov = np.mean(ma * mb * v)
    return float(cov / np.sqrt(np.mean(ma + ma**2 * v) * np.mean(mb + mb**2 * v)))


def deseasonalised(history: pd.Series) -> np.ndarray:
    weekday = history.index.day_of_week
    return (history - history.groupby(weekday).transform("mean")).to_numpy(float)


def history_correlation(histories, a: int, b: int, days: int | None = None) -> float:
    """Correlation of the de-seasonalised counts of wards a and b over the last ``days``."""
    x, y = deseasonalised(histories[a]), deseasonalised(histories[b])
    days = x.shape[0] if days is None else days
    return float(np.corrcoef(x[-days:], y[-days:])[0, 1])


def path_correlation(first, second) -> float:
    """Correlation of two wards' admissions over paths and days, each day's mean removed."""
    x = first.paths - first.paths.mean(axis=0)
    y = second.paths - second.paths.mean(axis=0)
    return float(np.corrcoef(x.ravel(), y.ravel())[0, 1])


def fisher_se(n: int) -> float:
    """SE of atanh(r) for n independent pairs. Source: Fisher (1921) z-transform."""
    return 1.0 / np.sqrt(n - 3)


@pytest.fixture(scope="module")
def histories():
    return hospital()


def test_the_known_process_is_correlated_as_designed(histories):
    # The generator itself against its analytic correlation (module docstring), within 3
    # Fisher SE of the history's 1,092 days (SE 0.030 in z).
    for a, b in ((0, 1), (0, 2), (1, 2)):
        truth = true_correlation(a, b)
        assert 0.3 <= truth <= 0.5
        r = history_correlation(histories, a, b)
        assert abs(np.arctanh(r) - np.arctanh(truth)) <= 3 * fisher_se(DAYS)


@pytest.mark.parametrize("strategy", ["recursive", "direct"])
def test_joint_paths_keep_the_cross_ward_correlation(histories, strategy):
    settings = ForecastSettings(strategy=strategy, max_lag=7)
    joint = forecast_wards(histories, [settings] * 3, HORIZON, PATHS, np.random.default_rng(3))
    assert joint.note == ""
    # The simulated correlation differs from the history's by the paths' Monte Carlo error and
    # by what the model changes (fitted levels, lags, level-scaled shocks, rounding); asked:
    # within 3 SE of the two sampling errors together, the history's (n = its 1,092 days, the
    # pools hold all but the first few) and the paths' (n = 400 paths x 14 days):
    # sqrt(1/1089 + 1/5597) = 0.033 in z. Measured (history 0.399, 0.411, 0.313 for the pairs
    # 0-1, 0-2, 1-2): recursive 0.388, 0.400, 0.294; direct 0.389, 0.416, 0.287.
    se = np.hypot(fisher_se(DAYS), fisher_se(PATHS * HORIZON))
    for a, b in ((0, 1), (0, 2), (1, 2)):
        simulated = path_correlation(joint.results[a], joint.results[b])
        reference = history_correlation(histories, a, b)
        assert abs(np.arctanh(simulated) - np.arctanh(reference)) <= 3 * se, (a, b, simulated)


def test_independent_forecasts_lose_the_correlation(histories):
    # The same wards forecast one by one, each from its own stream: the paths' correlation is
    # 0 up to its Monte Carlo error, SE 1/sqrt(5,600 - 3) = 0.013 (3 SE: 0.040), far from the
    # history's 0.3-0.45: the check above can fail.
    rngs = np.random.default_rng(3).spawn(3)
    results = [
        forecast_admissions(history, QUICK, HORIZON, PATHS, rng)
        for history, rng in zip(histories, rngs, strict=True)
    ]
    for a, b in ((0, 1), (0, 2), (1, 2)):
        simulated = path_correlation(results[a], results[b])
        assert abs(np.arctanh(simulated)) <= 3 * fisher_se(PATHS * HORIZON)
        assert history_correlation(histories, a, b) > 0.25


def test_each_ward_keeps_its_own_forecast(histories):
    # Each ward's marginal against its own forecast_admissions (other draws): per day, the
    # means differ by less than 4 SE, SE = sd sqrt(2 / n) for two independent samples of n
    # paths; the 10% and 90% quantiles by less than 4 SE, SE = sd sqrt(p (1 - p) 2 / n) /
    # phi(z_p) (the asymptotic SE of a sample quantile with the density of a normal of the
    # day's sd; Source: e.g. Stuart and Ord, Kendall's Advanced Theory of Statistics, the
    # variance p (1 - p) / (n f^2) of a sample quantile; from memory), plus half an
    # admission for whole-number quantiles.
    joint = forecast_wards(histories, [QUICK] * 3, HORIZON, PATHS, np.random.default_rng(8))
    rngs = np.random.default_rng(9).spawn(3)
    for history, result, rng in zip(histories, joint.results, rngs, strict=True):
        alone = forecast_admissions(history, QUICK, HORIZON, PATHS, rng)
        assert result.summary.order == alone.summary.order  # the same fit
        assert result.summary.coefficients == alone.summary.coefficients
        sd = np.sqrt((result.paths.var(axis=0) + alone.paths.var(axis=0)) / 2)
        assert np.all(np.abs(result.mean - alone.mean) <= 4 * sd * np.sqrt(2 / PATHS))
        for p, density in ((0.1, 0.1755), (0.9, 0.1755)):  # phi(1.2816) = 0.1755
            se = sd * np.sqrt(p * (1 - p) * 2 / PATHS) / density
            gap = np.abs(np.quantile(result.paths, p, axis=0) - np.quantile(alone.paths, p, axis=0))
            assert np.all(gap <= 4 * se + 0.5), (p, gap.max())


def test_one_ward_gives_a_forecast(histories):
    joint = forecast_wards(histories[:1], [QUICK], HORIZON, PATHS, np.random.default_rng(1))
    (result,) = joint.results
    assert joint.note == ""
    assert result.paths.shape == (PATHS, HORIZON) and result.paths.dtype == np.int64
    assert (result.paths >= 0).all()
    assert result.dates[0] == histories[0].index[-1] + pd.Timedelta(days=1)
    # Ward 0 admits 20 a day over a week (the shape's mean is 1), so the two weeks' mean is 20
    # up to the fitted level's error (a day's sd is sqrt(20 + 20^2 x 0.041) = 6.0, over 1,092
    # days: SE 0.18, 0.9%) and the paths' (6.0 / sqrt(5,600) = 0.08); asked within 5%.
    assert result.mean.mean() == pytest.approx(MEANS[0], rel=0.05)


def test_wards_of_different_strategies_are_drawn_in_two_groups(histories):
    recursive, direct = QUICK, ForecastSettings(strategy="direct", max_lag=7)
    joint = forecast_wards(
        histories, [recursive, direct, direct], HORIZON, PATHS, np.random.default_rng(4)
    )
    assert "histories[0]" in joint.note and "histories[1], histories[2]" in joint.note
    assert "not kept" in joint.note
    se = fisher_se(PATHS * HORIZON)
    # Between the groups: independent draws, correlation 0 within 3 SE (0.040) ...
    assert abs(np.arctanh(path_correlation(joint.results[0], joint.results[1]))) <= 3 * se
    # ... within the direct group: kept, as in the test above.
    se = np.hypot(fisher_se(DAYS), se)
    simulated = path_correlation(joint.results[1], joint.results[2])
    reference = history_correlation(histories, 1, 2)
    assert abs(np.arctanh(simulated) - np.arctanh(reference)) <= 3 * se


def test_recursive_wards_take_the_same_day_among_the_common_days():
    # Pools of the last 100 and 70 days: the common days are the last 70; every path and day
    # takes one of them, uniformly: mean 35.5 days back, SE sqrt((70^2 - 1) / 12) / sqrt(n)
    # (a discrete uniform's sd); asked within 4 SE. Each ward's row is that day.
    pools = [PoolRows("recursive", 100 - np.arange(100)), PoolRows("recursive", 70 - np.arange(70))]
    n_paths, days = 2000, 10
    uniforms = SharedUniforms.draw(np.random.default_rng(0), n_paths, days)
    chosen = shared_choices(pools, uniforms, pd.Timestamp("2024-06-30"))["recursive"]
    assert chosen.min() >= 1 and chosen.max() <= 70
    se = np.sqrt((70**2 - 1) / 12 / chosen.size)
    assert chosen.mean() == pytest.approx(35.5, abs=4 * se)
    for pool in pools:
        rows = SharedRows(pool, chosen, np.random.default_rng(1)).shock_rows(
            pool.back.shape[0], (n_paths, days)
        )
        np.testing.assert_array_equal(pool.back[rows], chosen)


def test_direct_wards_fill_unobserved_days_from_common_origins():
    # Two wards' backtest error paths over 3 days from origins 1 .. 60 days before the end
    # (origin b observes min(3, b) days), the second ward's from 1 .. 55 only: common 1 .. 55.
    # A path keeps its origin on the days it observed; origins 1 and 2 take day 3 (and 1 day 2)
    # from the common origins 3 .. 55 that observed it, uniformly: mean 29, SE
    # sqrt((53^2 - 1) / 12) / sqrt(n); asked within 4 SE.
    def pool(last):
        back = np.arange(last, 0, -1)
        return PoolRows("direct", back, np.arange(3)[None, :] < back[:, None])

    pools = [pool(60), pool(55)]
    n_paths = 30000
    uniforms = SharedUniforms.draw(np.random.default_rng(2), n_paths, 3)
    chosen = shared_choices(pools, uniforms, pd.Timestamp("2024-06-30"))["direct"]
    own = chosen[:, 0]
    assert own.min() >= 1 and own.max() <= 55
    whole = own >= 3
    np.testing.assert_array_equal(chosen[whole, 2], own[whole])
    np.testing.assert_array_equal(chosen[own == 2, 1], own[own == 2])
    filled = chosen[own <= 2, 2]
    assert filled.min() >= 3
    se = np.sqrt((53**2 - 1) / 12 / filled.size)
    assert filled.mean() == pytest.approx(29.0, abs=4 * se)
    for ward in pools:
        rows = SharedRows(ward, chosen, np.random.default_rng(1)).error_rows(ward.known, n_paths)
        np.testing.assert_array_equal(ward.back[rows], chosen)


def test_histories_ending_on_different_days_are_refused(histories):
    short = [histories[0], histories[1].iloc[:-1]]
    with pytest.raises(PlannerError, match=r"^histories\[1\]: ends on 2024-12-28, histories\["):
        forecast_wards(short, [QUICK] * 2, HORIZON, PATHS, np.random.default_rng(0))


def test_too_few_common_days_are_refused(histories):
    # A ward with 50 days of history has under 50 one-step residuals: fewer than the 56 days.
    assert LEAST_COMMON_DAYS == 56
    new_ward = [histories[0], histories[1].iloc[-50:]]
    with pytest.raises(PlannerError, match=r"histories\[0\], histories\[1\] share \d\d dates"):
        forecast_wards(new_ward, [QUICK] * 2, HORIZON, PATHS, np.random.default_rng(0))


def test_too_few_common_origins_are_refused(histories):
    # Direct, 60 days, horizon 14: at most 60 - 14 + 1 = 47 in-sample origins, under 50.
    assert LEAST_COMMON_ORIGINS == 50
    direct = ForecastSettings(strategy="direct", max_lag=7)
    new_ward = [histories[0], histories[1].iloc[-60:]]
    with pytest.raises(PlannerError, match=r"error-path origins of histories\[0\], histories"):
        forecast_wards(new_ward, [direct] * 2, HORIZON, PATHS, np.random.default_rng(0))


def test_a_setting_per_ward_is_needed(histories):
    with pytest.raises(PlannerError, match=r"^settings: 1 given for 2 histories"):
        forecast_wards(histories[:2], [QUICK], HORIZON, PATHS, np.random.default_rng(0))
    with pytest.raises(PlannerError, match=r"^histories: no ward"):
        forecast_wards([], [], HORIZON, PATHS, np.random.default_rng(0))


SLOW_HORIZON, SLOW_PATHS = 28, 2000


@pytest.mark.slow
@pytest.mark.parametrize(
    ("options", "pool_days"),
    [
        # the backtests choose one strategy for the wards together
        ({"strategy": "auto"}, DAYS),
        # parameter uncertainty: refits per ward, shocks shared
        ({"strategy": "recursive", "refit": True}, DAYS),
        # out-of-sample one-step errors: 26 weekly origins, the last 182 days
        ({"strategy": "recursive", "residuals": "backtest"}, 182),
        # 60 origins 3 days apart, the last 180 days; the last 9 observe under 28 days, so
        # days are filled from common origins that observed them
        (
            {
                "strategy": "direct",
                "residuals": "backtest",
                "backtest_origins": 60,
                "backtest_every": 3,
            },
            180,
        ),
    ],
)
def test_joint_paths_keep_the_correlation_with_every_option(histories, options, pool_days):
    # As the fast test, with 2,000 paths x 28 days; the reference is the history's correlation
    # over the days the pools hold, n = pool_days in its SE. Wards drawn in different groups
    # (given different strategies) would be checked for 0 correlation, SE 1/sqrt(56,000 - 3)
    # = 0.004. Measured (pairs 0-1, 0-2, 1-2; history over the pool's days in brackets):
    # auto (recursive for all three) 0.396 (0.399), 0.409 (0.411), 0.310 (0.313); refit
    # 0.391 (0.399), 0.404 (0.411), 0.306 (0.313); recursive with backtest errors 0.499
    # (0.501), 0.435 (0.449), 0.376 (0.379); direct with backtest errors 0.482 (0.500), 0.440
    # (0.452), 0.368 (0.380).
    settings = ForecastSettings(max_lag=14, **options)
    joint = forecast_wards(
        histories, [settings] * 3, SLOW_HORIZON, SLOW_PATHS, np.random.default_rng(21)
    )
    paths_se = fisher_se(SLOW_PATHS * SLOW_HORIZON)
    se = np.hypot(fisher_se(pool_days), paths_se)
    strategies = [result.summary.strategy for result in joint.results]
    assert (joint.note != "") == (len(set(strategies)) > 1)
    for a, b in ((0, 1), (0, 2), (1, 2)):
        simulated = np.arctanh(path_correlation(joint.results[a], joint.results[b]))
        if strategies[a] != strategies[b]:
            assert abs(simulated) <= 3 * paths_se, (a, b, simulated)
            continue
        reference = np.arctanh(history_correlation(histories, a, b, pool_days))
        assert abs(simulated - reference) <= 3 * se, (a, b, simulated, reference)


@pytest.mark.slow
def test_each_ward_keeps_its_own_forecast_with_many_paths(histories):
    # As the fast test, 4,000 paths x 28 days, the backtest choosing the strategy.
    settings = ForecastSettings(max_lag=14)
    n = 4000
    joint = forecast_wards(histories, [settings] * 3, SLOW_HORIZON, n, np.random.default_rng(5))
    rngs = np.random.default_rng(6).spawn(3)
    for history, result, rng in zip(histories, joint.results, rngs, strict=True):
        alone = forecast_admissions(history, settings, SLOW_HORIZON, n, rng)
        if alone.summary.strategy != result.summary.strategy:
            continue  # the backtests' own draws chose differently: not the same forecast
        sd = np.sqrt((result.paths.var(axis=0) + alone.paths.var(axis=0)) / 2)
        assert np.all(np.abs(result.mean - alone.mean) <= 4 * sd * np.sqrt(2 / n))
        for p in (0.1, 0.9):
            se = sd * np.sqrt(p * (1 - p) * 2 / n) / 0.1755
            gap = np.abs(np.quantile(result.paths, p, axis=0) - np.quantile(alone.paths, p, axis=0))
            assert np.all(gap <= 4 * se + 0.5), (p, gap.max())


def test_auto_wards_take_one_strategy_so_all_are_drawn_together(histories):
    # Alone, the backtests of these wards choose different strategies (recursive, direct,
    # recursive: measured); together, the wards asking "auto" take the one with the lower
    # pinball loss summed over them, and a ward given a strategy keeps it.
    auto = ForecastSettings(max_lag=14)
    rngs = np.random.default_rng(1).spawn(3)
    pairs = zip(histories, rngs, strict=True)
    alone = [forecast_admissions(h, auto, HORIZON, 200, r).summary.strategy for h, r in pairs]
    assert len(set(alone)) > 1
    joint = forecast_wards(histories, [auto] * 3, HORIZON, 200, np.random.default_rng(1))
    assert len({result.summary.strategy for result in joint.results}) == 1
    assert joint.note == ""
    given = ForecastSettings(max_lag=14, strategy="direct")
    mixed = forecast_wards(histories, [auto, auto, given], HORIZON, 200, np.random.default_rng(1))
    assert mixed.results[2].summary.strategy == "direct"
    if mixed.results[0].summary.strategy == "recursive":
        assert "not kept" in mixed.note

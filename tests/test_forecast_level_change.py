"""Dated level changes (planner.forecast.level_change, level_uncertainty): a known step in
daily admissions, announced changes, the step's standard error against statsmodels, the
backtest across a change and the refusals."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
from level_change_data import level_after, stepped_admissions

from planner.errors import PlannerError
from planner.forecast.ar import design, fit_selected
from planner.forecast.backtest import BacktestInputs
from planner.forecast.deterministic import step_columns, terms_for_history
from planner.forecast.level_change import check_level_changes
from planner.forecast.level_uncertainty import (
    direct_standard_errors,
    drawn_deterministic,
    recursive_standard_errors,
)
from planner.forecast.pipeline import forecast_admissions, observed_columns, run_backtest
from planner.forecast.settings import ForecastSettings, LevelChange
from planner.forecast.strategies import fit_direct

HORIZON = 28


def declared(change: pd.Timestamp, **options) -> ForecastSettings:
    return ForecastSettings(level_changes=(LevelChange(change.date()),), **options)


@pytest.fixture(scope="module")
def stepped():
    return stepped_admissions(seed=1)


@pytest.mark.parametrize("strategy", ["recursive", "direct"])
def test_a_declared_step_gives_the_new_level_and_an_undeclared_one_is_biased_low(stepped, strategy):
    # Known process: Poisson counts around a weekday pattern (~19.6/day), +25% from 8 weeks
    # before the end (tests/level_change_data.py); the next 4 weeks' true mean is 24.46.
    history, change = stepped
    paths = 2000
    with_change = forecast_admissions(
        history, declared(change, strategy=strategy), HORIZON, paths, np.random.default_rng(2)
    )
    truth = level_after(with_change.dates)
    # SE of the forecast's 4-week mean: the new level is learned from the 56 days after the
    # change, each Poisson with variance ~ its mean, so its estimate has SE sqrt(24.5 / 56) =
    # 0.66 admissions/day (the weekday pattern and the lags come mostly from the 3 years
    # before); plus the Monte Carlo error of the paths' mean (sd of the paths' 4-week means /
    # sqrt(paths), 0.02): 0.66 in all. Measured: recursive 23.83, direct 23.76.
    per_path = with_change.paths.mean(axis=1)
    se = np.sqrt(truth / 56 + per_path.var() / paths)
    assert with_change.paths.mean() == pytest.approx(truth, abs=3 * se)
    assert with_change.summary.level_changes[0].date == change
    without = forecast_admissions(
        history, ForecastSettings(strategy=strategy), HORIZON, paths, np.random.default_rng(2)
    )
    # Undeclared, the 3 years at the old level hold the forecast down (measured 20.11 and
    # 20.08, 6.6 SE below).
    assert without.paths.mean() < truth - 3 * se
    assert without.summary.level_changes == ()


def test_an_announced_change_raises_the_paths_from_its_date_only(stepped):
    history, _ = stepped_admissions(seed=3, step=0.0)
    day = history.index[-1] + pd.Timedelta(days=11)
    settings = ForecastSettings(strategy="recursive")
    announced = ForecastSettings(
        strategy="recursive", level_changes=(LevelChange(day.date(), 0.10),)
    )
    base = forecast_admissions(history, settings, HORIZON, 4000, np.random.default_rng(5))
    raised = forecast_admissions(history, announced, HORIZON, 4000, np.random.default_rng(5))
    before = raised.dates < day
    assert before.sum() == 10
    # Same seed, same continuous paths: the days before are the very same counts.
    np.testing.assert_array_equal(raised.paths[:, before], base.paths[:, before])
    # From the date: x 1.10 up to the rounding to whole admissions, which moves each value by
    # at most 0.5 (near-uniform fractions: SD about 0.29), so the mean over 4000 paths x 18
    # days moves by an SE <= 0.5 / sqrt(72000) = 0.0019 admissions on a mean of ~20, both runs.
    ratio = raised.paths[:, ~before].mean() / base.paths[:, ~before].mean()
    assert ratio == pytest.approx(1.10, abs=3 * np.sqrt(2) * 0.0019 / 19.0 * 1.1)
    assert raised.summary.announced_changes[0].relative_change == 0.10


def fitted_with_step(history, change):
    settings = declared(change, max_lag=14)
    dates = history.index
    terms = terms_for_history(settings, dates)
    names = observed_columns(terms, dates)
    deterministic = terms.in_sample(dates)[list(names)].to_numpy()
    values = history.to_numpy(float)
    fit = fit_selected(values, 14, deterministic, names, engine="numpy")
    return values, deterministic, names, fit


def test_the_step_standard_error_equals_statsmodels_bse(stepped):
    history, change = stepped
    values, deterministic, names, fit = fitted_with_step(history, change)
    (step,) = step_columns(names)
    assert names[step] == f"level_change_{change.date().isoformat()}"
    X, y = design(values, fit.order, deterministic)
    # Source: statsmodels OLS(y, X).fit().bse, the reference library.
    reference = sm.OLS(y, X).fit()
    np.testing.assert_allclose(fit.coefficients, reference.params, rtol=1e-8)
    errors = recursive_standard_errors(fit, values, deterministic)
    np.testing.assert_allclose(errors, reference.bse, rtol=1e-8)
    direct = fit_direct(values, fit.order, HORIZON, deterministic)
    horizon_errors = direct_standard_errors(direct, values, deterministic)
    for h in (1, 7, HORIZON):
        X, y = design(values, fit.order, deterministic, horizon=h, hold_back=fit.order)
        reference = sm.OLS(y, X).fit()
        np.testing.assert_allclose(horizon_errors[h - 1], reference.bse, rtol=1e-8)
    # The per-path draws follow N(estimate, SE^2): sample mean within 3 SE / sqrt(N) and
    # sample sd within 3 x its SE, SE sqrt(1 / (2 (N - 1))) relative.
    n = 20000
    drawn = drawn_deterministic(fit, values, deterministic, [step], n, np.random.default_rng(0))
    assert drawn[:, step].mean() == pytest.approx(
        fit.coefficients[step], abs=3 * errors[step] / n**0.5
    )
    assert drawn[:, step].std(ddof=1) == pytest.approx(errors[step], rel=3 / np.sqrt(2 * (n - 1)))
    others = [j for j in range(deterministic.shape[1]) if j != step]
    np.testing.assert_array_equal(
        drawn[:, others], np.broadcast_to(fit.coefficients[others], (n, len(others)))
    )


def backtest_coverage(seeds, declare: bool, noise: str = "poisson", step: float = 0.25, **extra):
    """Coverage of the central 80% band over 7 weekly origins after the change, per series
    (``extra``: further forecast settings)."""
    found = []
    for seed in seeds:
        history, change = stepped_admissions(seed, step=step, noise=noise)
        options = {"backtest_origins": 7, "backtest_every": 7, **extra}
        settings = declared(change, **options) if declare else ForecastSettings(**options)
        backtest = run_backtest(history, settings, HORIZON, 400, np.random.default_rng(seed))
        assert (backtest.origins > change).all()
        overall = backtest.overall()
        found.append(overall.loc[["recursive", "direct"], "coverage_80"].to_numpy())
    return np.array(found)


def assert_near_80(coverage: np.ndarray) -> None:
    # Monte Carlo error: each series gives one coverage (49 distinct days scored from up to 4
    # origins each); the SE of the average is the sd across series / sqrt(series).
    for column in coverage.T:
        se = column.std(ddof=1) / np.sqrt(column.shape[0])
        assert column.mean() == pytest.approx(0.80, abs=3 * se), (column.mean(), se)


def test_backtest_after_a_declared_change_covers_about_80_percent_fast():
    # Poisson series, 8 seeds: declared, the band holds 0.796 / 0.802 of days (recursive /
    # direct; SE 0.017 / 0.020; with one spread for every day it held 0.751 / 0.761, the
    # shortfall the slow version measures).
    coverage = backtest_coverage(range(300, 308), declare=True)
    assert_near_80(coverage)
    # Undeclared, the forecasts sit below the new level: 0.698 / 0.685, lower by 0.098 / 0.117
    # (SE of the paired difference across the 8 series 0.031 / 0.027; asked: more than 2 SE).
    difference = coverage - backtest_coverage(range(300, 308), declare=False)
    se = difference.std(ddof=1, axis=0) / np.sqrt(difference.shape[0])
    assert np.all(difference.mean(axis=0) > 2 * se)


@pytest.mark.slow
def test_backtest_after_a_declared_change_with_constant_spread_covers_80_percent():
    # Noise of the same variance before and after the change isolates the step and its drawn
    # uncertainty, with the spread that such noise has (spread = "constant"; "auto" chooses
    # between the spreads on the 49 one-step errors of these 7 origins and takes "level" on
    # some series, whose paths then widen with the level: measured 0.827, SE 0.007). Measured
    # 0.808 / 0.806 (SE 0.009), as on the same series without any change (0.809 / 0.807).
    constant = {"spread": "constant"}
    coverage = backtest_coverage(range(300, 340), declare=True, noise="constant", **constant)
    assert_near_80(coverage)
    unchanged = backtest_coverage(
        range(300, 340), declare=False, noise="constant", step=0.0, **constant
    )
    difference = coverage - unchanged
    se = difference.std(ddof=1, axis=0) / np.sqrt(difference.shape[0])
    assert np.all(np.abs(difference.mean(axis=0)) < 3 * se + 1e-9)


@pytest.mark.slow
def test_backtest_after_a_declared_poisson_change_covers_80_percent():
    # Source: known process generated here. With the spread following the level (spread =
    # "auto", which chose "level" on most of the 40 series), the residuals from the 3 years at
    # the old level are scaled up to the new one: measured 0.799 / 0.799 (SE 0.007); with one
    # spread for every day the band held 0.764 / 0.761 (SE 0.009).
    assert_near_80(backtest_coverage(range(300, 340), declare=True))


def test_refusals_name_the_key(stepped):
    history, change = stepped
    dates = history.index
    settings = ForecastSettings(
        level_changes=(
            LevelChange(change.date()),
            LevelChange(dates[-1].date() + pd.Timedelta(days=3)),
        )
    )
    with pytest.raises(PlannerError) as error:
        check_level_changes(dates, settings, 91, "plan.toml")
    assert str(error.value).startswith(
        "plan.toml: forecast.level_change[2].relative_change: required for a change after the "
        f"history ends ({dates[-1].date()})"
    )
    early = ForecastSettings(level_changes=(LevelChange(dates[0].date() - pd.Timedelta(days=1)),))
    with pytest.raises(
        PlannerError,
        match=r"plan.toml: forecast.level_change\[1\].date: .* is "
        r"before the history's first day",
    ):
        check_level_changes(dates, early, 91, "plan.toml")
    # max_lag 28 + 91 forecast days = 119 days are needed before a change inside the history.
    close = ForecastSettings(level_changes=(LevelChange(dates[118].date()),))
    with pytest.raises(
        PlannerError,
        match=r"leaves 118 days of history before it, a change "
        r"inside the history needs at least 119 \(max_lag 28 \+ 91 forecast",
    ):
        check_level_changes(dates, close, 91, "plan.toml")
    check_level_changes(
        dates, ForecastSettings(level_changes=(LevelChange(dates[119].date()),)), 91, "plan.toml"
    )
    # The engine refuses the same dates (naming the key, without a file) ...
    with pytest.raises(PlannerError, match=r"^forecast.level_change\[1\].date"):
        forecast_admissions(history, early, 14, 10, np.random.default_rng(0))


def test_a_change_after_a_cut_history_without_a_size_is_not_known_yet(stepped):
    # A hindcast forecasts from a history cut before the change: a change without a stated
    # size is then not known, and the forecast is the one made without it.
    history, change = stepped
    cut = history[history.index < change - pd.Timedelta(days=20)]
    settings = ForecastSettings(strategy="recursive", max_lag=14)
    plain = forecast_admissions(cut, settings, 28, 100, np.random.default_rng(4))
    later = forecast_admissions(
        cut, declared(change, strategy="recursive", max_lag=14), 28, 100, np.random.default_rng(4)
    )
    np.testing.assert_array_equal(later.paths, plain.paths)


def test_the_backtest_leaves_the_step_out_before_its_date(stepped):
    history, change = stepped
    settings = declared(change)
    dates = history.index
    terms = terms_for_history(settings, dates)
    inputs = BacktestInputs.build(history.to_numpy(float), dates, terms, HORIZON)
    at = int(np.flatnonzero(dates == change)[0])
    (step,) = step_columns(inputs.names)
    assert step not in inputs.columns_at(at)  # the change is the origin's first forecast day
    assert len(inputs.columns_at(at)) == len(inputs.names) - 1
    assert inputs.columns_at(at + 1) is None  # one training day at the new level

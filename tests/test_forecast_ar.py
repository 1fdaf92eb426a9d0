"""AR fits against published values and against statsmodels AutoReg / ar_select_order."""

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
from references.forecasting import SUNSPOTS_AR9_LLF, SUNSPOTS_AR9_NOBS, SUNSPOTS_AR9_PARAMS
from statsmodels.tsa.ar_model import AutoReg, ar_select_order

from planner.forecast.ar import fit_ar, least_squares, select_order
from planner.forecast.deterministic import DeterministicTerms
from planner.forecast.strategies import direct_point, fit_direct, recursive_point


@pytest.fixture(scope="module")
def sunspots():
    return sm.datasets.sunspots.load_pandas().data["SUNACTIVITY"].to_numpy()


def simulated_ar3(n=1500, seed=11, weekday=False):
    """AR(3) around a level of 5 (with a weekday pattern if asked), Gaussian noise."""
    rng = np.random.default_rng(seed)
    dates = pd.date_range("2022-01-03", periods=n, freq="D")  # a Monday
    level = 5.0 - (1.2 * (dates.day_of_week >= 5) if weekday else 0.0)
    y = np.zeros(n)
    noise = rng.normal(0, 1, n)
    for t in range(3, n):
        y[t] = 0.4 * y[t - 1] + 0.2 * y[t - 2] + 0.15 * y[t - 3] + noise[t]
    return pd.Series(y + np.asarray(level), index=dates)


def test_sunspots_ar9_equals_stata(sunspots):
    # Source: Stata `var` values as recorded in statsmodels' ARResultsOLS (REFERENCES.md).
    fit = fit_ar(sunspots, 9)
    assert fit.nobs == SUNSPOTS_AR9_NOBS
    np.testing.assert_allclose(fit.coefficients, SUNSPOTS_AR9_PARAMS, rtol=0, atol=1e-6)
    assert fit.llf == pytest.approx(SUNSPOTS_AR9_LLF, abs=1e-6)
    assert list(fit.params.index) == ["const"] + [f"lag_{j}" for j in range(1, 10)]


@pytest.mark.parametrize("engine", ["statsmodels", "numpy"])
def test_sunspots_fit_equals_autoreg(sunspots, engine):
    # Source: statsmodels AutoReg(y, 9, trend="c"), the reference library.
    reference = AutoReg(sunspots, 9, trend="c").fit()
    fit = fit_ar(sunspots, 9, engine=engine)
    np.testing.assert_allclose(fit.coefficients, reference.params, rtol=1e-8, atol=1e-10)
    np.testing.assert_allclose(fit.residuals, reference.resid, rtol=1e-8, atol=1e-8)
    assert fit.sigma2 == pytest.approx(reference.sigma2, rel=1e-8)
    assert fit.llf == pytest.approx(reference.llf, rel=1e-8)
    assert fit.aic == pytest.approx(reference.aic, rel=1e-8)
    assert fit.bic == pytest.approx(reference.bic, rel=1e-8)
    # Recursive point forecasts: AutoReg's dynamic out-of-sample prediction.
    ours = recursive_point(fit, sunspots, np.ones((20, 1)))
    theirs = reference.predict(start=len(sunspots), end=len(sunspots) + 19)
    np.testing.assert_allclose(ours, theirs, rtol=1e-8)


def test_weekday_dummies_equal_autoreg_seasonal():
    # Source: statsmodels AutoReg(..., trend="c", seasonal=True, period=7). The series starts on
    # a Monday, so AutoReg's dropped first season is our Monday baseline.
    y = simulated_ar3(weekday=True)
    terms = DeterministicTerms(origin=y.index[0], weekday=True)
    deterministic = terms.in_sample(y.index).to_numpy()
    fit = fit_ar(y.to_numpy(), 4, deterministic, terms.names)
    reference = AutoReg(y, 4, trend="c", seasonal=True, period=7).fit()
    np.testing.assert_allclose(fit.coefficients, reference.params.to_numpy(), rtol=1e-8)
    assert fit.sigma2 == pytest.approx(reference.sigma2, rel=1e-8)
    assert fit.aic == pytest.approx(reference.aic, rel=1e-8)
    future = pd.date_range(y.index[-1] + pd.Timedelta(days=1), periods=30, freq="D")
    ours = recursive_point(fit, y.to_numpy(), terms.out_of_sample(future).to_numpy())
    theirs = reference.predict(start=len(y), end=len(y) + 29).to_numpy()
    np.testing.assert_allclose(ours, theirs, rtol=1e-8)


def test_fourier_terms_equal_autoreg_with_exog():
    # Source: statsmodels AutoReg with exog (exog columns come after the lags in AutoReg).
    y = simulated_ar3(n=900)
    terms = DeterministicTerms(origin=y.index[0], weekday=True, fourier_pairs=2, trend=True)
    frame = terms.in_sample(y.index)
    fit = fit_ar(y.to_numpy(), 3, frame.to_numpy(), terms.names, engine="numpy")
    exog = frame.drop(columns="const")
    reference = AutoReg(y.to_numpy(), 3, trend="c", exog=exog.to_numpy()).fit()
    reordered = np.concatenate([reference.params[:1], reference.params[4:], reference.params[1:4]])
    np.testing.assert_allclose(fit.coefficients, reordered, rtol=1e-8, atol=1e-10)
    assert fit.aic == pytest.approx(reference.aic, rel=1e-8)


@pytest.mark.parametrize("criterion", ["aic", "bic"])
def test_order_choice_equals_ar_select_order(criterion):
    # Source: statsmodels ar_select_order (orders 0 .. max_lag on one common sample after
    # max_lag).
    y = simulated_ar3().to_numpy()
    reference = ar_select_order(y, 12, ic=criterion, trend="c")
    ours = select_order(y, 12, criterion=criterion)
    assert reference.ar_lags is not None and max(reference.ar_lags) >= 1
    assert ours.order == max(reference.ar_lags)
    # The criterion values order by order, order 0 (the constant alone) included.
    # ar_select_order counts parameters with OLS's df_model (regressors minus the constant) + 1,
    # one fewer than AutoReg's df_model + 1 that we follow, so its values sit a constant (2 for
    # AIC, log(nobs) for BIC) below ours.
    # (Its key for order 0 is 0, for order p the tuple of lags 1 .. p.)
    theirs = {
        lags if lags == 0 else max(lags): value
        for lags, value in getattr(reference, criterion).items()
    }
    shift = 2.0 if criterion == "aic" else np.log(ours.table["nobs"].iloc[0])
    assert list(ours.table["order"]) == list(range(0, 13))
    for order, value in zip(ours.table["order"], ours.table[criterion], strict=True):
        assert value - shift == pytest.approx(theirs[order], rel=1e-9)


def test_order_choice_with_weekday_dummies_equals_ar_select_order():
    # Source: statsmodels ar_select_order(..., seasonal=True, period=7); series starts Monday.
    y = simulated_ar3(weekday=True, seed=5)
    terms = DeterministicTerms(origin=y.index[0], weekday=True)
    ours = select_order(y.to_numpy(), 14, terms.in_sample(y.index).to_numpy(), "aic")
    reference = ar_select_order(y, 14, ic="aic", trend="c", seasonal=True, period=7)
    assert ours.order == max(reference.ar_lags)


def test_noise_free_cosine_recovers_the_identity():
    # Source: cos(w t) = 2 cos(w) cos(w (t-1)) - cos(w (t-2)) (trigonometric identity).
    omega = 2 * np.pi / 17.3
    t = np.arange(400)
    x = np.cos(omega * t)
    fit = fit_ar(x, 2)
    np.testing.assert_allclose(fit.lag_coefficients, [2 * np.cos(omega), -1.0], atol=1e-8)
    assert np.max(np.abs(fit.residuals)) < 1e-8
    future = np.cos(omega * np.arange(400, 460))
    np.testing.assert_allclose(recursive_point(fit, x, np.ones((60, 1))), future, atol=1e-8)
    direct = fit_direct(x, 2, 60)
    np.testing.assert_allclose(direct_point(direct, x, np.ones((60, 1))), future, atol=1e-8)


def test_least_squares_equals_numpy_lstsq_also_for_singular_and_ill_conditioned_designs():
    # Source: numpy.linalg.lstsq (SVD; the minimum-norm solution when X lacks full rank).
    rng = np.random.default_rng(4)
    n = 500
    base = np.column_stack([np.ones(n), rng.poisson(4.0, (n, 6)), np.arange(n) / n])
    y = base @ rng.normal(size=base.shape[1]) + rng.normal(size=n)
    singular = np.column_stack([base, base[:, 1]])  # a column repeated: X'X is singular
    ill = base.copy()
    ill[:, 2] = ill[:, 1] + 1e-5 * rng.normal(size=n)  # nearly repeated: cond ~ 1e6
    for X, tolerance in ((base, 1e-12), (singular, 1e-9), (ill, 1e-9)):
        expected = np.linalg.lstsq(X, y, rcond=None)[0]
        np.testing.assert_allclose(least_squares(X, y), expected, rtol=0, atol=tolerance)


def weekday_white_noise(seed: int, n: int = 1000) -> tuple[np.ndarray, np.ndarray]:
    """Independent N(0, 4.4^2) noise around a weekday pattern (no autoregression), and the
    calendar design (constant and six weekday dummies); starts on a Monday."""
    rng = np.random.default_rng(seed)
    dates = pd.date_range("2023-01-02", periods=n, freq="D")
    pattern = np.array([22.0, 21.0, 20.0, 20.0, 21.0, 17.0, 16.0])[dates.day_of_week]
    terms = DeterministicTerms(origin=dates[0], weekday=True)
    return pattern + rng.normal(0.0, 4.4, n), terms.in_sample(dates).to_numpy()


def test_order_zero_is_chosen_for_white_noise_around_a_weekday_pattern():
    # With no autoregression the true order is 0. AIC overfits now and then: for white noise
    # its chance of choosing order 0 is about 0.7 in large samples (Shibata 1976, from memory),
    # 14 of 20 expected, sd 2. Measured: 16 of 20; asked: at least 10 (and at least half).
    chosen = []
    for seed in range(20):
        y, deterministic = weekday_white_noise(seed)
        chosen.append(select_order(y, 28, deterministic, "aic", min_lag=0).order)
    assert sum(order == 0 for order in chosen) >= 10, chosen
    # Without order 0 among the candidates the search cannot choose it.
    y, deterministic = weekday_white_noise(0)
    assert select_order(y, 28, deterministic, "aic", min_lag=1).order >= 1


def test_order_zero_criteria_equal_statsmodels_ols():
    # Source: statsmodels OLS(y, X).fit().aic / .bic for the calendar-only design: they count
    # the k regressors, we count sigma2 too (as AutoReg), so ours are 2 (AIC) and log(nobs)
    # (BIC) above.
    y, deterministic = weekday_white_noise(0)
    selection = select_order(y, 28, deterministic, "aic", min_lag=0)
    row = selection.table.iloc[0]
    assert row["order"] == 0 and row["nobs"] == len(y) - 28
    common = sm.OLS(y[28:], deterministic[28:]).fit()  # the common sample: rows after max_lag
    assert row["aic"] - 2 == pytest.approx(common.aic, rel=1e-10)
    assert row["bic"] - np.log(row["nobs"]) == pytest.approx(common.bic, rel=1e-10)
    fit = fit_ar(y, 0, deterministic, engine="numpy")  # refitted on every day
    full = sm.OLS(y, deterministic).fit()
    assert fit.nobs == len(y)
    assert fit.aic - 2 == pytest.approx(full.aic, rel=1e-10)
    np.testing.assert_allclose(fit.coefficients, full.params, rtol=1e-10)
    # Both strategies forecast the calendar regression's prediction.
    future = deterministic[:35]  # the same weekdays five weeks on
    np.testing.assert_allclose(recursive_point(fit, y, future), full.predict(future), rtol=1e-10)
    direct = fit_direct(y, 0, 35, deterministic)
    assert direct_point(direct, y, future)[0] == pytest.approx(full.predict(future)[0], rel=1e-10)

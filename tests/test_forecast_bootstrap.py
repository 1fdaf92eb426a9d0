"""Bootstrap paths against Box-Jenkins forecast-error variances; counts and rounding."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from references.forecasting import ar1_error_variance, ar1_psi, sum_error_variance

from planner.forecast.ar import constant_only
from planner.forecast.bootstrap import to_counts
from planner.forecast.paths import SeriesDesign, model_paths
from planner.forecast.settings import ForecastSettings

PHI, SIGMA2, HORIZON = 0.6, 1.0, 14


def gaussian_ar1(n, seed):
    rng = np.random.default_rng(seed)
    noise = rng.normal(0.0, np.sqrt(SIGMA2), n + 200)
    x = np.zeros(n + 200)
    for t in range(1, n + 200):
        x[t] = PHI * x[t - 1] + noise[t]
    return x[200:] + 10.0


def sum_rho_squared(weights):
    """sum_k rho_k^2 over all lags of an MA process with these weights (Bartlett)."""
    weights = np.asarray(weights, float)
    gamma = np.correlate(weights, weights, mode="full")
    return float(np.sum((gamma / gamma.max()) ** 2))


def check_against_box_jenkins(strategy, n, n_paths, seed):
    # Source: Box, Jenkins, Reinsel & Ljung, 5th ed., ch. 5 (REFERENCES.md).
    # Tolerance: a variance estimated from N independent (near-)Gaussian draws has relative SE
    # sqrt(2/(N-1)); the residual pool the paths come from is itself a sample of n values of an
    # MA(h-1) process (the h-step errors), whose sample variance has relative SE
    # sqrt(2 sum_k rho_k^2 / n) (Bartlett). For the recursive strategy the pool is the one-step
    # residuals (rho = 0 beyond lag 0). We allow 4 combined SEs. The closed form is that of one
    # spread for every day (spread = "constant"); the level-scaled spread's own closed form is
    # checked in tests/test_forecast_spread.py.
    x = gaussian_ar1(n, seed)
    settings_ = ForecastSettings(order=1, weekday=False, annual=False, spread="constant")
    result = model_paths(
        strategy,
        SeriesDesign(x, constant_only(n), np.ones((HORIZON, 1))),
        settings_,
        n_paths,
        np.random.default_rng(seed + 1),
    )
    paths = result.paths
    psi = ar1_psi(PHI, HORIZON)
    for h in range(1, HORIZON + 1):
        expected = ar1_error_variance(PHI, SIGMA2, h)
        pool_weights = psi[:h] if strategy == "direct" else [1.0]
        rel_se = np.sqrt(2 / (n_paths - 1) + 2 * sum_rho_squared(pool_weights) / n)
        assert np.var(paths[:, h - 1], ddof=1) == pytest.approx(expected, rel=4 * rel_se)
        # The central 80% interval: q90 - q10 = 2 z_0.9 sd for a Gaussian. Its SE from N paths
        # is sd sqrt(2 p (1-p) / N) / phi(z) (p = 0.1, phi(z_0.9) = 0.17550), plus half the
        # pool's relative variance error.
        q10, q90 = np.quantile(paths[:, h - 1], [0.1, 0.9])
        width = 2 * 1.2815516 * np.sqrt(expected)
        width_rel_se = np.sqrt(2 * 0.09 / n_paths) / 0.17550 / (2 * 1.2815516) + rel_se / 2
        assert q90 - q10 == pytest.approx(width, rel=4 * width_rel_se)
    # The 7-day total: only coherent paths carry the covariances between days.
    weekly = paths[:, :7].sum(axis=1)
    expected = sum_error_variance(psi, SIGMA2, 7)
    weights = [np.sum(psi[: 7 - i]) for i in range(7)] if strategy == "direct" else [1.0]
    rel_se = np.sqrt(2 / (n_paths - 1) + 2 * sum_rho_squared(weights) / n)
    assert np.var(weekly, ddof=1) == pytest.approx(expected, rel=4 * rel_se)
    # Independent daily draws would give the sum of the daily variances instead, far off:
    independent = sum(ar1_error_variance(PHI, SIGMA2, h) for h in range(1, 8))
    assert abs(np.var(weekly) - independent) > 8 * rel_se * expected


@pytest.mark.parametrize("strategy", ["recursive", "direct"])
def test_paths_match_box_jenkins_fast(strategy):
    check_against_box_jenkins(strategy, n=5000, n_paths=5000, seed=3)


@pytest.mark.slow
@pytest.mark.parametrize("strategy", ["recursive", "direct"])
def test_paths_match_box_jenkins_large(strategy):
    check_against_box_jenkins(strategy, n=40000, n_paths=60000, seed=8)


def test_refit_paths_are_at_least_as_wide():
    # Parameter uncertainty adds variance (Pascual, Romo & Ruiz 2004): with a short series the
    # refit bootstrap's h-step spread should not be smaller than the plain one's (3 SE slack).
    x = gaussian_ar1(150, seed=4)
    future = np.ones((10, 1))
    plain = model_paths(
        "recursive",
        SeriesDesign(x, constant_only(150), future),
        ForecastSettings(order=1, spread="constant"),
        4000,
        np.random.default_rng(1),
    )
    refit = model_paths(
        "recursive",
        SeriesDesign(x, constant_only(150), future),
        ForecastSettings(order=1, refit=True, refit_series=40, spread="constant"),
        4000,
        np.random.default_rng(1),
    )
    v_plain, v_refit = plain.paths[:, -1].var(), refit.paths[:, -1].var()
    assert v_refit > v_plain * (1 - 3 * np.sqrt(2 / 4000))
    np.testing.assert_allclose(refit.point, plain.point)


@settings(max_examples=25, deadline=None)
@given(st.floats(0.0, 1.0), st.floats(0.6, 5.0), st.integers(0, 2**32 - 1))
def test_rounding_keeps_the_mean_and_adds_a_twelfth(fraction, sd, seed):
    # Values spread over several whole numbers (normal, sd >= 0.6) have near-uniform fractions:
    # rounding to the nearest keeps the mean (its bias is below 0.32 exp(-2 pi^2 sd^2) = 2e-4
    # at sd 0.6: the first Fourier term of the rounding error) and adds the quantisation
    # variance 1/12 (Sheppard's correction, W. F. Sheppard, Proc. London Math. Soc. 29 (1898);
    # from memory). N = 40,000 draws: SE of the mean sd_c / sqrt(N) (sd_c^2 = sd^2 + 1/12), of
    # the variance sd_c^2 sqrt(2 / N) (near-normal); asked within 4 SE (+ the bias bound).
    # Stochastic rounding would add E[f (1 - f)] = 1/6 instead: at sd 0.6 that is 0.083 more,
    # 7 SE of the variance, so this check tells the two apart.
    n = 40000
    mean = 5 * sd + fraction  # 5 sd above 0: clipping (checked below) plays no part
    values = np.maximum(mean + sd * np.random.default_rng(seed).standard_normal(n), 0.0)
    counts = to_counts(values)
    assert counts.dtype == np.int64
    assert np.array_equal(counts, to_counts(values))  # no random draw
    spread = np.sqrt(values.var() + 1 / 12)
    assert counts.mean() == pytest.approx(values.mean(), abs=4 * spread / np.sqrt(n) + 2e-4)
    assert counts.var() == pytest.approx(values.var() + 1 / 12, abs=4 * spread**2 * np.sqrt(2 / n))


def test_counts_are_clipped_at_zero_and_rounded_to_the_nearest():
    counts = to_counts(np.array([[-3.2, -0.1, 0.0, 0.4, 0.6, 2.5, 3.5]]))
    np.testing.assert_array_equal(counts[0], [0, 0, 0, 0, 1, 2, 4])  # halves to even

"""Length-of-stay distributions, fits and scenario settings, checked against outside references:
closed-form moments (Johnson, Kotz & Balakrishnan), MLE standard errors (Fisher information),
scipy.stats as the reference library for densities, fits and conditional survival."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import stats

from planner.errors import PlannerError
from planner.schema import choices
from planner.simulate.settings import StaySettings
from planner.simulate.stay_fit import StayFit, fit_stays, stay_distribution
from planner.simulate.stays import Empirical, Exponential, Gamma, Lognormal, Weibull
from tests.references import distributions as ref

# Each family with a reference scipy.stats distribution built here from the natural parameters.
FAMILIES = {
    "lognormal": (Lognormal(1.4, 0.8), stats.lognorm(0.8, scale=math.exp(1.4))),
    "gamma": (Gamma(2.5, 2.0), stats.gamma(2.5, scale=2.0)),
    "weibull": (Weibull(1.6, 6.0), stats.weibull_min(1.6, scale=6.0)),
    "exponential": (Exponential(4.0), stats.expon(scale=4.0)),
}
CLOSED_FORM = {
    "lognormal": lambda d: ref.lognormal_mean_sd(d.mu, d.sigma),
    "gamma": lambda d: ref.gamma_mean_sd(d.shape, d.scale),
    "weibull": lambda d: ref.weibull_mean_sd(d.shape, d.scale),
    "exponential": lambda d: (d.mean_days, d.mean_days),
}
FROM_MEAN_SD = {
    "lognormal": Lognormal.from_mean_sd,
    "gamma": Gamma.from_mean_sd,
    "weibull": Weibull.from_mean_sd,
}


def rng(seed: int = 0) -> np.random.Generator:
    return np.random.default_rng(seed)


# --- moments --------------------------------------------------------------------------------


@pytest.mark.parametrize("family", sorted(FROM_MEAN_SD))
@pytest.mark.parametrize("mean, sd", [(5.1, 4.8), (2.0, 0.5), (10.0, 25.0), (1.0, 1.0)])
def test_from_mean_sd_gives_the_requested_moments(family, mean, sd):
    d = FROM_MEAN_SD[family](mean, sd)
    # Source: closed-form moments, Johnson, Kotz & Balakrishnan (tests/references/distributions).
    got_mean, got_sd = CLOSED_FORM[family](d)
    assert got_mean == pytest.approx(mean, rel=1e-9)
    assert got_sd == pytest.approx(sd, rel=1e-9)
    # Source: scipy.stats moments (reference library).
    assert d.mean == pytest.approx(d.scipy.mean(), rel=1e-9)
    assert d.sd == pytest.approx(d.scipy.std(), rel=1e-9)


def test_exponential_from_mean_and_describe():
    d = Exponential.from_mean(3.0)
    assert (d.mean, d.sd) == pytest.approx((3.0, 3.0))  # Source: basic property, sd = mean
    assert Lognormal.from_mean_sd(5.1, 4.8).describe() == "lognormal, mean 5.1 d, sd 4.8 d"


@pytest.mark.parametrize("family", sorted(FAMILIES))
def test_sample_follows_the_distribution(family):
    d, reference = FAMILIES[family]
    x = d.sample(rng(1), 4000)
    assert x.shape == (4000,)
    # Source: Kolmogorov-Smirnov test against the scipy.stats CDF (reference library).
    assert stats.kstest(x, reference.cdf).pvalue > 1e-3
    t = np.array([0.5, 2.0, 5.0, 20.0])
    np.testing.assert_allclose(d.survival(t), reference.sf(t), rtol=1e-12)


# --- fits -----------------------------------------------------------------------------------


def _standard_errors(family, d, n):
    if family == "lognormal":
        return ref.lognormal_standard_errors(d.mu, d.sigma, n)
    if family == "gamma":
        return ref.gamma_standard_errors(d.shape, d.scale, n)
    return ref.weibull_standard_errors(d.shape, d.scale, n)


def _parameters(family, d):
    return (d.mu, d.sigma) if family == "lognormal" else (d.shape, d.scale)


def _check_recovery(family, n, seed):
    true, _ = FAMILIES[family]
    fitted = fit_stays(true.sample(rng(seed), n), family).distribution
    assert fitted.name == family
    # Source: asymptotic SE of the MLE from the Fisher information (standard MLE theory).
    for got, want, se in zip(
        _parameters(family, fitted),
        _parameters(family, true),
        _standard_errors(family, true, n),
        strict=True,
    ):
        assert abs(got - want) < 4 * se


@pytest.mark.parametrize("family", ["lognormal", "gamma", "weibull"])
def test_fit_recovers_known_parameters(family):
    _check_recovery(family, 20_000, seed=2)


@pytest.mark.slow
@pytest.mark.parametrize("family", ["lognormal", "gamma", "weibull"])
@pytest.mark.parametrize("seed", range(5))
def test_fit_recovers_known_parameters_many_seeds(family, seed):
    _check_recovery(family, 200_000, seed=100 + seed)


def test_weibull_standard_errors_match_the_classical_constants():
    se_shape, se_scale = ref.weibull_standard_errors(2.0, 3.0, 1)
    # Source: classical Weibull MLE variances 0.608 k^2/n and 1.109 lambda^2/(k^2 n) (memory).
    assert se_shape**2 / 2.0**2 == pytest.approx(ref.WEIBULL_SHAPE_VARIANCE_CONSTANT, abs=1e-3)
    assert se_scale**2 * 2.0**2 / 3.0**2 == pytest.approx(
        ref.WEIBULL_SCALE_VARIANCE_CONSTANT, abs=1e-3
    )


def test_aic_is_2k_minus_2_loglik_of_the_scipy_mle():
    x = FAMILIES["gamma"][0].sample(rng(3), 500)
    fit = fit_stays(x, "best")
    assert isinstance(fit, StayFit) and fit.n == 500
    # Source: AIC = 2k - 2 log L (Akaike 1974); MLE and log-density from scipy.stats (reference).
    for name, dist in [("lognormal", stats.lognorm), ("gamma", stats.gamma)]:
        params = dist.fit(x, floc=0)
        assert fit.aic[name] == pytest.approx(4 - 2 * dist.logpdf(x, *params).sum(), rel=1e-9)
    shape, _, scale = stats.weibull_min.fit(x, floc=0)
    loglik = stats.weibull_min.logpdf(x, shape, scale=scale).sum()
    assert fit.aic["weibull"] == pytest.approx(4 - 2 * loglik, rel=1e-7)
    # Exponential MLE of the scale is the sample mean (closed form), one parameter.
    loglik = stats.expon.logpdf(x, scale=x.mean()).sum()
    assert fit.aic["exponential"] == pytest.approx(2 - 2 * loglik, rel=1e-9)
    best = min(["lognormal", "gamma", "weibull"], key=fit.aic.get)
    assert fit.distribution.name == best


@pytest.mark.parametrize("family", ["lognormal", "gamma", "weibull"])
def test_aic_picks_the_generating_family_on_a_large_sample(family):
    x = FAMILIES[family][0].sample(rng(4), 5000)
    assert fit_stays(x).distribution.name == family


def test_empirical_fit_still_reports_parametric_aic():
    x = FAMILIES["lognormal"][0].sample(rng(5), 300)
    fit = fit_stays(x, "empirical")
    assert isinstance(fit.distribution, Empirical)
    assert set(fit.aic) >= {"lognormal", "gamma", "weibull"}
    assert np.array_equal(fit.distribution.stays, np.sort(x))


# --- remaining stay -------------------------------------------------------------------------


def _conditional_cdf(reference, e):
    """1 - P(S > e + r) / P(S > e), in log space (scipy.stats logsf, reference library)."""
    return lambda r: -np.expm1(reference.logsf(e + r) - reference.logsf(e))


# elapsed days as survival levels: 1 (e = 0), 0.5, 1e-3, 1e-12.
@pytest.mark.parametrize("family", sorted(FAMILIES))
@pytest.mark.parametrize("level", [1.0, 0.5, 1e-3, 1e-12])
def test_remaining_stay_follows_the_conditional_survival(family, level):
    d, reference = FAMILIES[family]
    e = float(reference.isf(level))
    r = d.sample_remaining(rng(6), np.full(3000, e))
    assert np.all(r > 0) and np.all(np.isfinite(r))
    # Source: P(R > r) = S(e + r) / S(e); Kolmogorov-Smirnov test (scipy.stats.kstest).
    assert stats.kstest(r, _conditional_cdf(reference, e)).pvalue > 1e-3


@pytest.mark.parametrize("family", ["lognormal", "weibull"])
def test_remaining_stay_far_beyond_double_precision_survival(family):
    d, reference = FAMILIES[family]
    # 40 sds above the log-mean, and (e/lambda)^k = 800: absurd stays, but a numerics check.
    e = {"lognormal": math.exp(1.4 + 0.8 * 40), "weibull": 6.0 * 800 ** (1 / 1.6)}[family]
    assert reference.sf(e) < 1e-300  # P(S > e) underflows as a plain probability
    r = d.sample_remaining(rng(7), np.full(2000, e))
    assert np.all(r > 0) and np.all(np.isfinite(r))
    assert stats.kstest(r, _conditional_cdf(reference, e)).pvalue > 1e-3


def test_gamma_remaining_stay_after_survival_underflow_is_the_exponential_limit():
    d = Gamma(2.0, 3.0)
    r = d.sample_remaining(rng(8), np.full(2000, 5000.0))
    assert np.all(np.isfinite(r)) and np.all(r > 0)
    # Source: the gamma hazard tends to 1/scale, so the residual life tends to an exponential
    # with mean = scale (basic property, from memory).
    assert stats.kstest(r, stats.expon(scale=3.0).cdf).pvalue > 1e-3


def test_exponential_is_memoryless():
    d, reference = FAMILIES["exponential"]
    r = d.sample_remaining(rng(9), np.full(4000, 10.0))
    # Source: memorylessness of the exponential (basic property): R has the law of S.
    assert stats.kstest(r, reference.cdf).pvalue > 1e-3


def test_empirical_remaining_stay_resamples_the_longer_stays():
    stays = np.round(rng(10).lognormal(1.2, 0.7, 60), 3)
    d = Empirical(stays)
    e = float(np.median(stays))
    r = d.sample_remaining(rng(11), np.full(6000, e))
    atoms = np.unique(stays[stays > e] - e)
    index = np.searchsorted(atoms, r)
    assert np.all(index < atoms.size) and np.allclose(atoms[index], r, rtol=0, atol=1e-12)
    # Each observed stay > e is equally likely (ties counted): Pearson chi-square test,
    # scipy.stats.chisquare. Source: Pearson's chi-square goodness-of-fit test.
    weights = np.array([(stays[stays > e] - e == a).sum() for a in atoms], dtype=float)
    expected = weights / weights.sum() * r.size
    observed = np.bincount(index, minlength=atoms.size)
    # (Chi-square, not Kolmogorov-Smirnov: kstest assumes a continuous CDF, this law is discrete.)
    assert stats.chisquare(observed, expected).pvalue > 1e-3


def test_empirical_remaining_stay_beyond_the_longest_stay_uses_the_documented_tail():
    stays = rng(12).gamma(2.0, 2.5, 200)
    d = Empirical(stays)
    threshold = np.quantile(stays, 0.9)
    tail_mean = (stays[stays > threshold] - threshold).mean()
    assert d.tail_mean_days == pytest.approx(tail_mean)
    r = d.sample_remaining(rng(13), np.full(3000, stays.max() + 1.0))
    assert stats.kstest(r, stats.expon(scale=tail_mean).cdf).pvalue > 1e-3


@pytest.mark.parametrize("family", sorted(FAMILIES))
def test_remaining_stay_uses_one_uniform_per_patient(family):
    d = FAMILIES[family][0]
    a, b = rng(14), rng(14)
    d.sample_remaining(a, np.linspace(0, 30, 17))
    b.random(17)
    assert a.random() == b.random()  # same stream position, whatever the chunking


# --- rescaling and scenario settings --------------------------------------------------------


ALL = {**{k: v[0] for k, v in FAMILIES.items()}, "empirical": Empirical(rng(15).gamma(2, 3, 99))}


@pytest.mark.parametrize("family", sorted(ALL))
def test_rescaled_multiplies_every_stay(family):
    d = ALL[family]
    r = d.rescaled(0.7)
    assert r.name == d.name
    assert r.mean == pytest.approx(0.7 * d.mean, rel=1e-12)
    assert r.sd / r.mean == pytest.approx(d.sd / d.mean, rel=1e-12)  # CV kept
    t = np.array([0.3, 1.0, 4.0, 9.0])
    # Source: definition of scaling, P(cS > t) = P(S > t/c).
    np.testing.assert_allclose(r.survival(t), d.survival(t / 0.7), rtol=1e-12)
    if family in CLOSED_FORM:
        assert CLOSED_FORM[family](r)[0] == pytest.approx(0.7 * CLOSED_FORM[family](d)[0])


def test_change_days_shifts_the_mean_and_keeps_the_cv():
    d = stay_distribution(StaySettings(model="gamma", mean=5.1, sd=4.8, change_days=-0.5), None)
    assert isinstance(d, Gamma)
    mean, sd = ref.gamma_mean_sd(d.shape, d.scale)  # Source: closed-form gamma moments (JKB)
    assert mean == pytest.approx(4.6) and sd / mean == pytest.approx(4.8 / 5.1)
    d = stay_distribution(StaySettings(model="weibull", mean=5.1, sd=4.8, change_days=-0.5), None)
    assert ref.weibull_mean_sd(d.shape, d.scale)[0] == pytest.approx(4.6)


def test_change_days_and_scale_are_one_rescaling():
    s = StaySettings(model="lognormal", mean=6.0, sd=3.0, change_days=-0.5, scale=0.9)
    d = stay_distribution(s, None)
    mean, sd = ref.lognormal_mean_sd(d.mu, d.sigma)
    assert mean == pytest.approx((6.0 - 0.5) * 0.9) and sd / mean == pytest.approx(0.5)


def test_fitted_and_empirical_stays_with_change():
    x = FAMILIES["gamma"][0].sample(rng(16), 400)
    d = stay_distribution(StaySettings(model="empirical", change_days=-0.5), x)
    assert d.mean == pytest.approx(x.mean() - 0.5)
    shape, _, scale = stats.gamma.fit(x, floc=0)  # Source: scipy.stats MLE (reference library)
    d = stay_distribution(StaySettings(model="gamma", change_days=-0.5), x)
    assert d.mean == pytest.approx(shape * scale - 0.5, rel=1e-9)


@pytest.mark.parametrize("model", choices("stay.model"))
def test_every_model_a_scenario_can_name_is_fitted(model):
    # The maximum-likelihood gamma and exponential and the Kaplan-Meier estimate of stays
    # without censoring keep the sample mean; the lognormal and Weibull fits come close to it.
    x = FAMILIES["gamma"][0].sample(rng(17), 400)
    d = stay_distribution(StaySettings(model=model), x, np.ones(x.size, dtype=bool))
    assert d.mean == pytest.approx(x.mean(), rel=0.1)


def test_best_or_empirical_with_mean_and_sd_is_lognormal():
    for model in ["best", "empirical"]:
        d = stay_distribution(StaySettings(model=model, mean=5.0, sd=2.0), None)
        assert isinstance(d, Lognormal)
    d = stay_distribution(StaySettings(model="exponential", mean=5.0), None)
    assert isinstance(d, Exponential) and d.mean == pytest.approx(5.0)


# The scenario's own limits on [stay] (model, mean, sd, scale, sd only with mean) are checked
# when it is read: tests/test_scenario.py. These rules need the model or the episodes.
@pytest.mark.parametrize(
    "stay, stays, message",
    [
        (
            StaySettings(model="lognormal", mean=2.0, sd=1.0, change_days=-2.0),
            None,
            "stay.change_days: mean stay 2.00 d -2 d gives 0.00 d, must be > 0",
        ),
        (StaySettings(model="best"), None, "stays: no episodes"),
        (StaySettings(model="best"), np.array([]), "stays: no episodes"),
        (StaySettings(model="best"), np.array([1.0, -2.0]), "stays: every length of stay"),
    ],
)
def test_bad_stay_settings_raise_a_planner_error(stay, stays, message):
    with pytest.raises(PlannerError) as error:
        stay_distribution(stay, stays)
    assert message in str(error.value)


def test_bad_parameters_raise_a_planner_error():
    with pytest.raises(PlannerError, match="sigma"):
        Lognormal(1.0, 0.0)
    with pytest.raises(PlannerError, match="sd"):
        Weibull.from_mean_sd(1.0, 1e-4)
    with pytest.raises(PlannerError, match="stays"):
        Empirical(np.array([2.0, np.nan]))


# --- properties -----------------------------------------------------------------------------

_finite = dict(allow_nan=False, allow_infinity=False)
distributions = st.one_of(
    st.builds(Lognormal, st.floats(-3, 4, **_finite), st.floats(0.05, 3, **_finite)),
    st.builds(Gamma, st.floats(0.05, 50, **_finite), st.floats(0.01, 50, **_finite)),
    st.builds(Weibull, st.floats(0.2, 20, **_finite), st.floats(0.01, 50, **_finite)),
    st.builds(Exponential, st.floats(0.01, 100, **_finite)),
    st.builds(
        lambda xs: Empirical(np.array(xs)),
        st.lists(st.floats(0.01, 365, **_finite), min_size=1, max_size=50),
    ),
)


@settings(max_examples=150, deadline=None)
@given(
    d=distributions,
    t=st.lists(st.floats(0, 1e4, **_finite), min_size=1, max_size=30),
    seed=st.integers(0, 2**32 - 1),
)
def test_stays_are_positive_and_survival_is_a_non_increasing_probability(d, t, seed):
    g = rng(seed)
    x = d.sample(g, 50)
    assert x.shape == (50,) and np.all(np.isfinite(x)) and np.all(x > 0)
    s = d.survival(np.sort(np.array(t)))
    assert np.all((s >= 0) & (s <= 1)) and np.all(np.diff(s) <= 1e-15)
    r = d.sample_remaining(g, np.array(t))
    assert r.shape == (len(t),) and np.all(np.isfinite(r)) and np.all(r > 0)

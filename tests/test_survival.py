"""Stays with censoring: Kaplan-Meier against a published table, the hand-computed
product-limit formula and statsmodels; censored maximum likelihood; the bias that
completed-only stays carry; sampling from the Kaplan-Meier distribution."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from scipy import stats
from statsmodels.duration.survfunc import SurvfuncRight

from planner.errors import PlannerError
from planner.records.ward_history import stays_at
from planner.simulate.settings import StaySettings
from planner.simulate.stay_fit import (
    _censored_log_likelihood,
    fit_censored_stays,
    fit_stays,
    stay_distribution,
)
from planner.simulate.stays import Empirical, Gamma, Lognormal, Weibull
from planner.simulate.survival import KaplanMeierStays, kaplan_meier
from tests.references import survival as ref


def test_kaplan_meier_matches_the_published_6mp_table():
    km = kaplan_meier(ref.WEEKS, ref.OBSERVED)
    # Source: Freireich et al. (1963) 6-MP arm, Klein & Moeschberger Table 4.1A (from memory).
    np.testing.assert_array_equal(km.times, ref.TABLE["time"])
    np.testing.assert_array_equal(km.at_risk, ref.TABLE["at_risk"])
    np.testing.assert_array_equal(km.events, ref.TABLE["events"])
    np.testing.assert_allclose(km.survival, ref.TABLE["survival"], atol=5e-4)
    assert km.largest == 35.0


def test_kaplan_meier_matches_the_product_limit_formula_by_hand():
    # Source: product-limit formula S(t) = prod (1 - d_j / n_j) (Kaplan & Meier, JASA 53
    # (1958) 457-481), worked by hand on the 6-MP data: (n_j - d_j) / n_j at each relapse time.
    hand = np.cumprod([18 / 21, 16 / 17, 14 / 15, 11 / 12, 10 / 11, 6 / 7, 5 / 6])
    km = kaplan_meier(ref.WEEKS, ref.OBSERVED)
    np.testing.assert_allclose(km.survival, hand, rtol=1e-14)
    np.testing.assert_allclose(
        km([0.0, 5.99, 6.0, 9.0, 23.0, 35.0]), [1, 1, *hand[[0, 1]], hand[-1], hand[-1]]
    )


@pytest.mark.parametrize("seed", [0, 1])
def test_kaplan_meier_matches_statsmodels(seed):
    rng = np.random.default_rng(seed)
    stays = np.round(rng.lognormal(1.3, 0.8, 500), 1)  # rounded: many ties
    observed = rng.random(500) < 0.7
    km = kaplan_meier(stays, observed)
    # Source: statsmodels SurvfuncRight (reference library).
    reference = SurvfuncRight(stays, observed.astype(int))
    np.testing.assert_allclose(km.times, reference.surv_times, rtol=0, atol=0)
    np.testing.assert_allclose(km.survival, reference.surv_prob, rtol=1e-12)
    np.testing.assert_array_equal(km.at_risk, reference.n_risk)
    np.testing.assert_array_equal(km.events, reference.n_events)


def test_without_censoring_kaplan_meier_is_resampling():
    stays = np.random.default_rng(2).gamma(2.0, 2.5, 300)
    km_stays = KaplanMeierStays(stays, np.ones(300, bool))
    empirical = Empirical(stays)
    t = np.linspace(0, 20, 81)
    # Source: with no censoring the product-limit estimate is 1 - the empirical CDF (Kaplan &
    # Meier 1958); planner's Empirical is that resampling.
    np.testing.assert_allclose(km_stays.survival(t), empirical.survival(t), atol=1e-12)
    assert km_stays.mean == pytest.approx(empirical.mean, rel=1e-12)
    assert km_stays.sd == pytest.approx(empirical.sd, rel=1e-9)


def _censored_ward(seed, n=20_000, window=15.0, mean=5.0, sd=6.0):
    """Admissions spread evenly over ``window`` days, lognormal stays, all seen at the end."""
    rng = np.random.default_rng(seed)
    sigma2 = math.log1p((sd / mean) ** 2)
    mu, sigma = math.log(mean) - sigma2 / 2, math.sqrt(sigma2)
    admitted = rng.uniform(0, window, n)
    stays = rng.lognormal(mu, sigma, n)
    observed = admitted + stays <= window
    return np.where(observed, stays, window - admitted), observed, mu, sigma


def test_completed_stays_are_biased_and_censoring_fixes_it():
    durations, observed, mu, sigma = _censored_ward(seed=11)
    true = stats.lognorm(sigma, scale=math.exp(mu))  # mean 5 d, sd 6 d
    assert 1 - observed.mean() > 0.25  # heavy censoring: over a quarter still on the ward
    naive = durations[observed].mean()
    assert naive < 0.75 * true.mean()  # the long stays still running are missing
    # Monte Carlo tolerances for 20,000 stays (about 14,000 ended): S(t) has SE below 0.008
    # (Greenwood), mu and sigma below 0.012; allow about 4 SE.
    km = KaplanMeierStays(durations, observed)
    t = np.array([2.0, 5.0, 10.0])
    np.testing.assert_allclose(km.survival(t), true.sf(t), atol=0.03)
    fitted = fit_censored_stays(durations, observed, "lognormal").distribution
    assert abs(fitted.mu - mu) < 0.05 and abs(fitted.sigma - sigma) < 0.05
    assert fitted.mean == pytest.approx(true.mean(), rel=0.05)
    # The mean of the Kaplan-Meier distribution also rests on the tail rule beyond 15 days.
    assert km.mean == pytest.approx(true.mean(), rel=0.10)
    assert fit_censored_stays(durations, observed, "best").distribution.name == "lognormal"


@pytest.mark.parametrize(
    "family", [Lognormal(1.2, 0.7), Gamma(2.0, 2.5), Weibull(1.4, 5.0)], ids=lambda d: d.name
)
def test_censored_log_likelihood_matches_scipy(family):
    rng = np.random.default_rng(5)
    x = rng.gamma(2.0, 2.5, 200) + 0.01
    ended = rng.random(200) < 0.6
    # Source: scipy.stats logpdf / logsf (reference library).
    want = np.sum(family.scipy.logpdf(x[ended])) + np.sum(family.scipy.logsf(x[~ended]))
    assert _censored_log_likelihood(family, x, ended) == pytest.approx(want, rel=1e-10)


@pytest.mark.parametrize("family", ["lognormal", "gamma", "weibull"])
def test_censored_fit_without_censoring_is_the_ordinary_fit(family):
    x = np.random.default_rng(6).lognormal(1.4, 0.6, 2000)
    plain = fit_stays(x, family)
    censored = fit_stays(x, family, observed=np.ones(x.size, bool))
    # Source: with every stay ended the censored likelihood is the ordinary one, whose MLE
    # scipy.stats fit(floc=0) finds (reference library).
    assert censored.distribution.mean == pytest.approx(plain.distribution.mean, rel=1e-5)
    assert censored.distribution.sd == pytest.approx(plain.distribution.sd, rel=1e-4)
    assert censored.aic[family] == pytest.approx(plain.aic[family], rel=1e-7)


def test_censored_exponential_is_total_time_over_ended_stays():
    durations = np.array([2.0, 3.0, 4.0, 7.0])
    observed = np.array([True, False, True, False])
    fit = fit_censored_stays(durations, observed, "exponential")
    # Source: the exponential censored MLE, mean = total time at risk / events (standard).
    assert fit.distribution.mean == pytest.approx(16.0 / 2)


def test_kaplan_meier_sampling_and_remaining_stays():
    durations, observed, _, _ = _censored_ward(seed=12, n=5000)
    d = KaplanMeierStays(durations, observed)
    rng = np.random.default_rng(7)
    draws = d.sample(rng, 200_000)
    t = np.array([1.0, 3.0, 8.0, 14.0, 20.0])
    # Inverse transform reproduces the distribution's survival (Monte Carlo, SE < 0.0012).
    np.testing.assert_allclose([(draws > x).mean() for x in t], d.survival(t), atol=0.005)
    assert draws.mean() == pytest.approx(d.mean, rel=0.02)
    for elapsed in (2.0, 9.0):
        r = d.sample_remaining(rng, np.full(100_000, elapsed))
        # Conditional survival P(S > e + r | S > e) = S(e + r) / S(e).
        want = d.survival(elapsed + t) / d.survival(elapsed)
        np.testing.assert_allclose([(r > x).mean() for x in t], want, atol=0.006)
    beyond = d.sample_remaining(rng, np.full(100_000, d.estimate.largest + 5.0))
    # Documented tail rule: exponential beyond the longest stay, mean tail_mean_days.
    assert beyond.mean() == pytest.approx(d.tail_mean_days, rel=0.02)
    assert d.rescaled(2.0).mean == pytest.approx(2.0 * d.mean, rel=1e-12)
    assert "still in" in d.describe()


def test_stays_at_splits_ended_and_running_stays():
    episodes = pd.DataFrame(
        {
            "admitted_at": pd.to_datetime(
                ["2025-01-01 12:00", "2025-01-02 00:00", "2025-01-04 00:00"]
            ),
            "discharged_at": pd.to_datetime(["2025-01-02 12:00", "2025-01-05 00:00", None]),
        }
    )
    durations, observed = stays_at(episodes, pd.Timestamp("2025-01-03"))
    # By hand: first ended after 1 day; second running for 1 day at the moment; third not yet in.
    np.testing.assert_allclose(durations, [1.0, 1.0])
    np.testing.assert_array_equal(observed, [True, False])


def test_scenario_settings_use_censored_stays():
    durations, observed, _, _ = _censored_ward(seed=13, n=3000)
    d = stay_distribution(StaySettings(model="empirical"), durations, observed)
    assert isinstance(d, KaplanMeierStays)
    shorter = stay_distribution(
        StaySettings(model="empirical", change_days=-1.0), durations, observed
    )
    assert shorter.mean == pytest.approx(d.mean - 1.0, rel=1e-9)
    with pytest.raises(PlannerError, match="observed"):
        fit_censored_stays(durations, observed[:-1])
    with pytest.raises(PlannerError, match="no stay has ended"):
        kaplan_meier([1.0, 2.0], np.array([False, False]))


def test_remaining_stays_past_the_last_ended_stay_without_censoring():
    # Four ended stays, none censored: S(t) = 0.75, 0.5, 0.25, 0 after 1, 2, 3, 4 days, so no
    # stay is left beyond 4 days. A patient 1 day in with u = 0.5 has target 0.5 x S(1) =
    # 0.375, first passed at 3 days (S = 0.25): 2 days left (worked by hand). Patients at or
    # past 4 days have the documented exponential tail (mean tail_mean_days), with no 0/0 on
    # the way (warnings are errors in the test run) and no NaN.
    d = KaplanMeierStays(np.array([1.0, 2.0, 3.0, 4.0]), np.ones(4, dtype=bool))
    u = np.array([0.5, 0.5, 0.5])
    remaining = d.remaining_from_uniforms(u, np.array([1.0, 4.0, 5.0]))
    assert remaining[0] == pytest.approx(2.0)
    tail = -d.tail_mean_days * np.log(0.5)
    np.testing.assert_allclose(remaining[1:], [tail, tail])
    assert np.isfinite(remaining).all()

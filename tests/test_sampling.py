"""The random inputs both engines read: streams per path, arrival hours, stays.

Reference libraries: numpy's own ``SeedSequence.spawn`` and ``searchsorted`` (the inversion
``Generator.choice`` uses for probabilities), and scipy.stats distributions with the
Kolmogorov-Smirnov and chi-square tests. Statistical checks use p > 0.001 on one fixed seed
(a false alarm rate of 1 in 1,000 runs of a new seed).
"""

from __future__ import annotations

from datetime import date

import numpy as np
import pytest
from scipy import stats

from planner.simulate import sampling
from planner.simulate.model import WardModel
from planner.simulate.settings import WardSettings
from planner.simulate.stays import Exponential, Gamma, Lognormal, Weibull

START = date(2024, 1, 1)
PEAKED = np.array([1, 1, 1, 1, 1, 1, 2, 3, 5, 8, 9, 9, 8, 8, 7, 7, 6, 5, 4, 3, 3, 2, 1, 1], float)
PEAKED /= PEAKED.sum()


def model(stays=None, inpatients=5, profile=PEAKED) -> WardModel:
    return WardModel(START, WardSettings(beds=20), stays or Lognormal.from_mean_sd(5.0, 4.0),
                     np.linspace(0.5, 9.0, inpatients), profile)  # fmt: skip


def test_path_seeds_are_the_spawned_children():
    # Source: numpy's SeedSequence.spawn (reference library): the i-th child.
    root = np.random.SeedSequence(2024).spawn(2)[1]
    children = np.random.SeedSequence(2024).spawn(2)[1].spawn(6)
    for i, child in enumerate(children):
        state = sampling.path_seed(root, i).generate_state(4, np.uint64)
        np.testing.assert_array_equal(state, child.generate_state(4, np.uint64))


def test_a_path_draws_the_same_numbers_in_any_chunk():
    counts = np.random.default_rng(1).poisson(4.0, size=(12, 30))
    whole = sampling.draw_inputs(model(), counts, 7)
    part = sampling.draw_inputs(model(), counts[5:9], 7, first_path=5)
    for i in range(4):
        for mine, theirs in zip(part.path(i), whole.path(5 + i), strict=True):
            np.testing.assert_array_equal(mine, theirs)
    other = sampling.draw_inputs(model(), counts, 8)
    assert not np.array_equal(other.arrival_hours, whole.arrival_hours)


def test_arrival_hours_keep_the_days_and_follow_the_profile():
    counts = np.random.default_rng(2).poisson(6.0, size=(400, 28))
    drawn = sampling.draw_inputs(model(), counts, 11)
    hours = drawn.arrival_hours
    for i in range(drawn.paths):
        times, _, _ = drawn.path(i)
        assert (np.diff(times) >= 0).all()
        np.testing.assert_array_equal(
            np.bincount((times // 24).astype(int), minlength=28), counts[i]
        )
    observed = np.bincount((hours % 24).astype(int), minlength=24)
    # Source: chi-square goodness of fit (scipy.stats.chisquare) against the profile.
    assert stats.chisquare(observed, PEAKED * observed.sum()).pvalue > 0.001
    within = hours % 1.0
    assert stats.kstest(within, "uniform").pvalue > 0.001


def test_hour_of_day_is_the_inversion_generator_choice_uses():
    # Source: numpy searchsorted(cdf, u, "right") on the cumulative profile, with uniforms at
    # the table's bucket edges and on the profile's steps as well as random ones.
    cdf = sampling.cumulative_profile(PEAKED)
    edges = np.arange(sampling.HOUR_BUCKETS) / sampling.HOUR_BUCKETS
    u = np.concatenate([np.random.default_rng(4).random(500), edges, cdf[:-1],
                        np.nextafter(cdf[:-1], 0), np.nextafter(edges[1:], 0)])  # fmt: skip
    within = np.full(u.size, 0.25)
    pairs = np.column_stack([u, within]).ravel()
    hours = sampling.arrival_hours(pairs, np.array([[u.size]]), PEAKED)
    np.testing.assert_array_equal(hours, np.sort(np.searchsorted(cdf, u, "right") + 0.25))


@pytest.mark.parametrize(
    ("stays", "reference"),
    [
        (Lognormal(1.4, 0.7), stats.lognorm(0.7, scale=np.exp(1.4))),
        (Weibull(1.3, 5.0), stats.weibull_min(1.3, scale=5.0)),
        (Exponential(4.0), stats.expon(scale=4.0)),
        (Gamma(1.8, 2.5), stats.gamma(1.8, scale=2.5)),
    ],
    ids=["lognormal", "weibull", "exponential", "gamma"],
)
def test_stays_follow_their_distribution(stays, reference):
    counts = np.full((300, 20), 5)
    drawn = sampling.draw_inputs(model(stays), counts, 12)
    # Source: scipy.stats distributions and kstest (reference library).
    assert stats.kstest(drawn.stay_days, reference.cdf).pvalue > 0.001
    # Remaining stays given 3 days already spent: P(S - 3 > r | S > 3), scipy's survival.
    elapsed = np.full(4000, 3.0)
    remaining = sampling.draw_inputs(
        WardModel(START, WardSettings(beds=20), stays, elapsed), np.zeros((1, 1), int), 13
    ).remaining_days.ravel()

    def conditional(r):
        return 1.0 - reference.sf(3.0 + r) / reference.sf(3.0)

    assert stats.kstest(remaining, conditional).pvalue > 0.001


def test_more_admissions_leave_earlier_patients_their_times_and_stays():
    # Common random numbers: a plan with extra admissions on the last day changes nothing
    # for the patients before them.
    counts = np.random.default_rng(5).poisson(4.0, size=(3, 14))
    more = counts.copy()
    more[:, -1] += 3
    base = sampling.draw_inputs(model(), counts, 21)
    grown = sampling.draw_inputs(model(), more, 21)
    for i in range(3):
        early = counts[i, :-1].sum()
        for mine, theirs in zip(base.path(i)[:2], grown.path(i)[:2], strict=True):
            np.testing.assert_array_equal(mine[:early], theirs[:early])
        np.testing.assert_array_equal(base.path(i)[2], grown.path(i)[2])

"""Arrival timing: hour-of-day profile and arrival times within each day."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import stats

from planner.errors import PlannerError
from planner.simulate.arrivals import hour_profile
from planner.simulate.sampling import arrival_hours

UNIFORM = np.full(24, 1 / 24)


def test_hour_profile_hand_counted_example():
    admitted_at = pd.Series(
        pd.to_datetime(
            [
                "2024-03-01 08:05",
                "2024-03-01 08:59",
                "2024-03-02 09:00",
                "2024-03-02 23:30",
                "2024-03-03 00:10",
                None,  # missing: ignored
            ]
        )
    )
    # Hand count: 5 admissions, two at 08h, one each at 09h, 23h and 00h.
    expected = np.zeros(24)
    expected[[8, 9, 23, 0]] = [2 / 5, 1 / 5, 1 / 5, 1 / 5]
    np.testing.assert_allclose(hour_profile(admitted_at), expected, rtol=0, atol=1e-15)


def test_hour_profile_without_times_is_uniform():
    np.testing.assert_array_equal(hour_profile(None), UNIFORM)
    np.testing.assert_array_equal(hour_profile(pd.Series([], dtype="datetime64[ns]")), UNIFORM)
    np.testing.assert_array_equal(hour_profile(pd.Series([pd.NaT, pd.NaT])), UNIFORM)


def test_hour_profile_rejects_values_that_are_not_times():
    with pytest.raises(PlannerError, match="admitted_at"):
        hour_profile(pd.Series(["not a time", "at all"]))


def _evening_profile() -> np.ndarray:
    p = np.zeros(24)
    p[8:20] = 1.0
    p[14:18] = 3.0
    return p / p.sum()


def arrival_times(rng, counts, profile):
    """One path's arrival hours from the uniforms of ``rng``, as the sampling module makes
    them (a pair of uniforms per admission)."""
    counts = np.asarray(counts, dtype=np.int64)
    return arrival_hours(rng.random(2 * counts.sum()), counts[None, :], profile)


def test_counts_per_day_are_kept_and_times_fall_in_their_day():
    counts = np.array([3, 0, 7, 1, 0, 12, 5])
    times = arrival_times(np.random.default_rng(0), counts, _evening_profile())
    assert times.size == counts.sum()
    assert np.all(np.diff(times) >= 0)  # sorted
    day = np.floor(times / 24).astype(int)
    np.testing.assert_array_equal(np.bincount(day, minlength=counts.size), counts)
    hour = np.floor(times % 24).astype(int)
    assert np.all(_evening_profile()[hour] > 0)  # never in an hour with no admissions


def test_hour_histogram_matches_the_profile():
    profile = _evening_profile()
    counts = np.full(10, 1500)
    times = arrival_times(np.random.default_rng(1), counts, profile)
    hours = np.bincount(np.floor(times % 24).astype(int), minlength=24)
    assert hours[profile == 0].sum() == 0
    used = profile > 0
    # Source: Pearson's chi-square goodness-of-fit test (scipy.stats.chisquare).
    result = stats.chisquare(hours[used], profile[used] * counts.sum())
    assert result.pvalue > 1e-3
    # Time within the hour is uniform: Kolmogorov-Smirnov test against U(0, 1).
    assert stats.kstest(times % 1, "uniform").pvalue > 1e-3


@pytest.mark.slow
def test_hour_histogram_matches_a_data_profile_on_many_draws():
    hours = np.random.default_rng(2).choice(24, size=5000, p=_evening_profile())
    profile = hour_profile(pd.Series(pd.Timestamp("2024-01-01") + pd.to_timedelta(hours, "h")))
    counts = np.full(365, 800)
    times = arrival_times(np.random.default_rng(3), counts, profile)
    observed = np.bincount(np.floor(times % 24).astype(int), minlength=24)
    used = profile > 0
    # Source: Pearson's chi-square goodness-of-fit test (scipy.stats.chisquare).
    assert stats.chisquare(observed[used], profile[used] * counts.sum()).pvalue > 1e-3


@settings(max_examples=100, deadline=None)
@given(
    counts=st.lists(st.integers(0, 30), min_size=0, max_size=60),
    weights=st.lists(st.floats(0, 1), min_size=24, max_size=24).filter(lambda w: sum(w) > 0),
    seed=st.integers(0, 2**32 - 1),
)
def test_every_arrival_stays_in_its_day(counts, weights, seed):
    profile = np.array(weights) / np.sum(weights)
    times = arrival_times(np.random.default_rng(seed), np.array(counts, dtype=int), profile)
    day = np.repeat(np.arange(len(counts)), counts)
    assert np.all(times >= day * 24) and np.all(times < day * 24 + 24)

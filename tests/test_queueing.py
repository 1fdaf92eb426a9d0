"""Erlang B/C and the infinite-server mean against published values and closed forms."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from planner.errors import PlannerError
from planner.simulate.queueing import (
    erlang_b,
    erlang_c,
    infinite_server_mean,
    inpatients_remaining_mean,
)
from tests.references.queueing import ERLANG_B, ERLANG_C


@pytest.mark.parametrize(("servers", "load", "expected"), ERLANG_B)
def test_erlang_b_matches_published_values(servers, load, expected):
    # Source: Erlang (1917), standard Erlang table; REFERENCES.md check values.
    assert erlang_b(servers, load) == pytest.approx(expected, abs=1e-6)


@pytest.mark.parametrize(("servers", "load", "expected"), ERLANG_C)
def test_erlang_c_matches_published_values(servers, load, expected):
    # Source: Erlang delay formula, REFERENCES.md check values.
    assert erlang_c(servers, load) == pytest.approx(expected, abs=1e-6)


@pytest.mark.parametrize(("servers", "load"), [(1, 0.5), (28, 22.4), (120, 100.0), (300, 250.0)])
def test_erlang_b_equals_truncated_poisson(servers, load):
    # Source: B(c, a) is the truncated-Poisson probability of c busy servers, P(N=c)/P(N<=c)
    # with N ~ Poisson(a) (Erlang 1917); scipy.stats.poisson as the reference library.
    expected = stats.poisson.pmf(servers, load) / stats.poisson.cdf(servers, load)
    assert erlang_b(servers, load) == pytest.approx(expected, rel=1e-9)


def test_erlang_edge_cases():
    # Source: from the formula, no servers block everyone; no load blocks no one.
    assert erlang_b(0, 3.0) == 1.0
    assert erlang_b(5, 0.0) == 0.0
    assert erlang_c(3, 3.0) == 1.0


@pytest.mark.parametrize(("servers", "load"), [(-1, 1.0), (2.5, 1.0), (3, -0.1), (3, np.nan)])
def test_erlang_rejects_bad_arguments(servers, load):
    with pytest.raises(PlannerError, match="servers|load"):
        erlang_b(servers, load)


def test_infinite_server_mean_constant_rate_exponential():
    # Source: Eick, Massey & Whitt, Oper. Res. 41 (1993): starting empty with constant rate,
    # m(t) = lambda * integral_0^t P(S > u) du, which for exponential stays (mean mu) is
    # lambda mu (1 - exp(-t/mu)).
    rate, mean = 4.0, 3.0
    times = np.array([0.5, 1.0, 2.0, 7.5, 30.0])
    got = infinite_server_mean(times, np.full(31, rate), lambda t: np.exp(-t / mean))
    np.testing.assert_allclose(got, rate * mean * (1 - np.exp(-times / mean)), rtol=1e-6)


def test_infinite_server_mean_step_in_rate():
    # Source: Eick, Massey & Whitt (1993), m(t) = integral lambda(u) P(S > t-u) du; with the
    # rate switched on only on day 0 and deterministic one-day stays (P(S > x) = 1{x < 1}),
    # occupancy rises linearly to lambda during day 0 and falls linearly back to 0 on day 1.
    rate = np.array([6.0, 0.0, 0.0])
    times = np.array([0.25, 0.5, 1.0, 1.5, 2.5])
    got = infinite_server_mean(times, rate, lambda t: (np.asarray(t) < 1.0).astype(float))
    np.testing.assert_allclose(got, [1.5, 3.0, 6.0, 3.0, 0.0], atol=2e-3)


def test_inpatients_remaining_mean_exponential_is_memoryless():
    # Source: memoryless property of the exponential, P(S > e + t)/P(S > e) = exp(-t/mu).
    elapsed = np.array([0.0, 1.0, 10.0, 3.5])
    got = inpatients_remaining_mean(np.array([0.0, 2.0]), elapsed, lambda t: np.exp(-t / 2.0))
    np.testing.assert_allclose(got, [4.0, 4.0 * np.exp(-1.0)], rtol=1e-12)

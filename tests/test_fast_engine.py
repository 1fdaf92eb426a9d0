"""The fast (numpy) ward engine against the SimPy ward model and queueing theory.

Both engines draw the same arrivals and stays for the same seed, and the bed rules are
deterministic given those times, so the tables must be equal path by path, not merely close.
Statistical checks use across-path (replicate) standard errors
with a 4 SE tolerance (Source: Morris, White & Crowther, Stat. Med. 38 (2019); Law, Simulation
Modeling and Analysis, ch. 9).
"""

from __future__ import annotations

from datetime import date

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from wards import drawn_ward

from planner.simulate.arrivals import arrival_times
from planner.simulate.fast import arrival_rows, by_slot, simpy_clock, simulate_ward_fast
from planner.simulate.model import WardModel
from planner.simulate.queueing import erlang_b, erlang_c
from planner.simulate.settings import BedChange, Shift, StaffingSettings, WardSettings
from planner.simulate.stays import Exponential, Gamma, Lognormal, Weibull
from planner.simulate.survival import KaplanMeierStays
from planner.simulate.ward import simulate_ward

START = date(2024, 1, 1)
UNIFORM = np.full(24, 1 / 24)
PEAKED = np.array([1, 1, 1, 1, 1, 1, 2, 3, 5, 8, 9, 9, 8, 8, 7, 7, 6, 5, 4, 3, 3, 2, 1, 1], float)
PEAKED /= PEAKED.sum()
NONE_IN = np.zeros(0)
CLOSURES = (BedChange(date(2024, 1, 5), date(2024, 1, 12), -6), BedChange(START, START, 3))
ESCALATION = (BedChange(date(2024, 1, 8), date(2024, 1, 20), 5),)
THREE_SHIFTS = StaffingSettings(
    shifts=(
        Shift("late", 14.0, 22.0, 5.0, (4, 4, 4, 4, 4, 3, 3)),
        Shift("night", 22.0, 6.0, 8.0, (2, 2, 2, 2, 2, 2, 2)),
        Shift("early", 6.0, 14.0, 5.0, (4, 4, 4, 4, 4, 3, 3)),
    ),
    minimum_nurses=2,
)


class FixedStay:
    """Every stay lasts exactly ``days``; remaining stay = days - elapsed (at least 0)."""

    def __init__(self, days: float):
        self.mean = days

    def sample(self, rng, size):
        return np.full(size, self.mean)

    def sample_remaining(self, rng, elapsed):
        return np.maximum(self.mean - np.asarray(elapsed, dtype=float), 0.0)


def poisson_paths(seed: int, paths: int, days: int, rate: float) -> np.ndarray:
    return np.random.default_rng(seed).poisson(rate, size=(paths, days))


def assert_same(*arguments, **keywords):
    """Both engines give equal tables (values, dtypes, row order) for the same arguments."""
    simpy = simulate_ward(*arguments, **keywords)
    fast = simulate_ward_fast(*arguments, **keywords)
    pd.testing.assert_frame_equal(fast.daily, simpy.daily, check_exact=True)
    pd.testing.assert_frame_equal(fast.shifts, simpy.shifts, check_exact=True)
    return fast


# --- Path-by-path identity with the SimPy model --------------------------------------------------


@pytest.mark.parametrize("policy", ["wait", "divert"])
@pytest.mark.parametrize(
    ("beds", "changes", "inpatients"),
    [
        (20, (), 0),  # fixed beds, empty at the start
        (20, (), 18),  # current inpatients
        (12, (), 18),  # more inpatients than beds: nobody moved, nobody admitted until < 12
        (20, CLOSURES, 18),  # closure on a full ward (nobody moved) and a one-day opening
        (16, ESCALATION, 10),  # escalation beds
    ],
)
def test_same_tables_as_simpy_model(policy, beds, changes, inpatients):
    ward = WardSettings(beds=beds, bed_changes=changes, policy=policy)
    arrivals = poisson_paths(2, 30, 35, 4.5)
    elapsed = np.linspace(0.0, 9.0, inpatients)
    stays = Lognormal.from_mean_sd(5.0, 4.0)
    fast = assert_same(arrivals, WardModel(START, ward, stays, elapsed, PEAKED), 2)
    blocked = "waited" if policy == "wait" else "diverted"
    assert fast.daily[blocked].sum() > 0  # the bed rules were exercised


@pytest.mark.parametrize("policy", ["wait", "divert"])
def test_same_tables_with_recorded_stays(policy):
    # Stays learned from episodes (Kaplan-Meier, some still running, so with the tail) are
    # drawn for a whole block at once from each path's uniforms; the numbers must not change.
    rng = np.random.default_rng(6)
    durations = np.round(rng.lognormal(1.4, 0.8, 600), 2)
    observed = rng.random(600) > 0.05
    observed[np.argsort(durations)[-10:]] = False
    stays = KaplanMeierStays(durations, observed)
    ward = WardSettings(beds=18, bed_changes=CLOSURES, policy=policy)
    arrivals = poisson_paths(9, 25, 30, 4.5)
    fast = assert_same(
        arrivals, WardModel(START, ward, stays, np.linspace(0.0, 30.0, 16), PEAKED), 9
    )
    blocked = "waited" if policy == "wait" else "diverted"
    assert fast.daily[blocked].sum() > 0


def test_same_staffing_tables_with_three_shifts():
    ward = WardSettings(beds=24, staffing=THREE_SHIFTS, bed_changes=ESCALATION)
    arrivals = poisson_paths(3, 20, 28, 5.0)
    fast = assert_same(
        arrivals,
        WardModel(START, ward, Gamma.from_mean_sd(5, 3), np.linspace(0, 6, 20), UNIFORM),
        3,
    )
    assert (fast.shifts["shortfall"] > 0).any()


@pytest.mark.parametrize(("early", "late"), [(7.5, 19.5), (7.3, 19.3), (0.0, 12.0)])
def test_same_staffing_tables_for_any_shift_times(early, late):
    # Half hours are read from a table, 7.3 h (not a binary fraction of an hour) by search;
    # a shift starting at 00:00 shares its boundary with midnight.
    staffing = StaffingSettings(
        shifts=(
            Shift("early", early, late, 4.0, (5,) * 7),
            Shift("late", late, early, 7.0, (3,) * 7),
        )
    )
    ward = WardSettings(beds=20, staffing=staffing, bed_changes=CLOSURES)
    arrivals = poisson_paths(8, 12, 21, 4.5)
    model = WardModel(START, ward, Lognormal.from_mean_sd(5, 4), np.linspace(0, 7, 15), PEAKED)
    fast = assert_same(arrivals, model, 8)
    assert (fast.shifts["shortfall"] > 0).any()


def test_same_result_when_chunked_and_seeded_by_sequence():
    arrivals = poisson_paths(4, 9, 20, 5.0)
    seed = np.random.SeedSequence(77).spawn(2)[1]  # the pipeline passes a spawned child
    ward = WardSettings(beds=15)
    stays = Weibull.from_mean_sd(4, 3)
    elapsed = np.array([1.0, 2.0, 7.0])
    tail = assert_same(
        arrivals[5:], WardModel(START, ward, stays, elapsed, UNIFORM), seed, first_path=5
    )
    whole = simulate_ward_fast(arrivals, WardModel(START, ward, stays, elapsed, UNIFORM), seed)
    np.testing.assert_array_equal(whole.daily.iloc[5 * 20 :].to_numpy(), tail.daily.to_numpy())


def test_closing_beds_moves_nobody_in_both_engines():
    # Worked example of the closing-bed rule (ward.py): 10 beds, 10 patients each with 4.5 days
    # to go, 5 beds close from day 1 to day 9. Nobody is moved and nobody is admitted until the
    # 10 leave at 108 h; afterwards the ward holds at most the 5 beds open.
    ward = WardSettings(
        beds=10, policy="divert", bed_changes=(BedChange(date(2024, 1, 2), date(2024, 1, 10), -5),)
    )
    fast = assert_same(
        np.full((1, 12), 2), WardModel(START, ward, FixedStay(4.5), np.zeros(10), UNIFORM), 1
    )
    daily = fast.daily
    np.testing.assert_array_equal(daily["census"][:4], 10)
    np.testing.assert_array_equal(daily["bed_admissions"][:4], 0)
    assert daily["discharges"][4] == 10
    assert (daily["peak_occupancy"][5:10] <= 5).all()


def test_first_come_first_served_worked_example():
    # 1 bed, 1-day stays, 3 arrivals on day 0: the queue holds 2, then 1, then 0 at midnight.
    model = WardModel(START, WardSettings(beds=1), FixedStay(1.0), NONE_IN, UNIFORM)
    fast = assert_same(np.array([[3, 0, 0, 0, 0]]), model, 4)
    assert fast.daily["queue"].tolist() == [2, 1, 0, 0, 0]
    assert fast.daily["bed_admissions"].tolist() == [1, 1, 1, 0, 0]


def test_arrival_rows_equal_arrival_times():
    # The vectorised arrival times use the same uniforms as Generator.choice (the reference):
    # the first half picks each admission's hour of day, the second the time within the hour.
    counts = np.array([3, 0, 7, 1, 12])
    total = counts.sum()
    for seed in range(20):
        expected = arrival_times(np.random.default_rng(seed), counts, PEAKED)
        uniforms = np.random.default_rng(seed).random(2 * total)
        rows = arrival_rows(uniforms[None, :total], uniforms[None, total:], counts[None], PEAKED)
        np.testing.assert_array_equal(rows[0], expected)


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    counts=st.lists(st.lists(st.integers(0, 9), min_size=10, max_size=10), min_size=1, max_size=3),
    beds=st.integers(1, 10),
    changes=st.lists(
        st.tuples(st.integers(0, 9), st.integers(0, 4), st.integers(-4, 4)), max_size=3
    ),
    policy=st.sampled_from(["wait", "divert"]),
    inpatients=st.integers(0, 12),
    seed=st.integers(0, 2**32 - 1),
)
def test_engines_agree_on_random_small_wards(counts, beds, changes, policy, inpatients, seed):
    ward = drawn_ward(beds, changes, policy)
    elapsed = np.linspace(0.0, 5.0, inpatients)
    assert_same(
        np.array(counts), WardModel(START, ward, Exponential.from_mean(2.0), elapsed, PEAKED), seed
    )


# --- Queueing theory on the fast engine -----------------------------------------------------------


def blocked_share(result, column: str, warmup: int) -> tuple[float, float]:
    """Share of arrivals after the warm-up that waited or were diverted: mean and SE."""
    daily = result.daily
    paths = daily["path"].nunique()
    after = slice(warmup, None)
    blocked = daily[column].to_numpy(float).reshape(paths, -1)[:, after].sum(1)
    arrived = daily["admissions"].to_numpy(float).reshape(paths, -1)[:, after].sum(1)
    shares = blocked / arrived
    return float(shares.mean()), float(shares.std(ddof=1) / np.sqrt(paths))


@pytest.mark.parametrize(
    ("beds", "rate", "stays"),
    [
        (10, 2.0, Lognormal.from_mean_sd(4.0, 3.0)),  # a = 8
        (5, 1.0, Gamma.from_mean_sd(3.0, 4.0)),  # a = 3
    ],
)
def test_fast_divert_share_is_erlang_b(beds, rate, stays):
    arrivals = poisson_paths(31, 1000, 120, rate)
    ward = WardSettings(beds=beds, policy="divert")
    result = simulate_ward_fast(arrivals, WardModel(START, ward, stays, NONE_IN, UNIFORM), 31)
    mean, se = blocked_share(result, "diverted", warmup=30)
    # Source: Erlang B (Erlang 1917), B(10, 8) and B(5, 3) = 81/736; insensitivity to the stay
    # distribution beyond its mean (Sevastyanov 1957).
    expected = erlang_b(beds, rate * stays.mean)
    assert abs(mean - expected) < 4 * se, (mean, se, expected)
    assert se < 0.05 * expected  # many paths: the check has power


def test_fast_wait_share_is_erlang_c():
    arrivals = poisson_paths(32, 600, 120, 1.0)
    ward = WardSettings(beds=5, policy="wait")
    stays = Exponential.from_mean(2.5)
    result = simulate_ward_fast(arrivals, WardModel(START, ward, stays, NONE_IN, UNIFORM), 32)
    mean, se = blocked_share(result, "waited", warmup=30)
    # Source: Erlang C, C(5, 2.5) = 0.1303713 (REFERENCES.md).
    assert abs(mean - erlang_c(5, 2.5)) < 4 * se, (mean, se)


def test_slot_layout_and_simpy_clock_equal_plain_numpy():
    # Reference: numpy's own transpose, np.diff and np.cumsum (general-purpose library).
    rng = np.random.default_rng(5)
    rows = np.sort(rng.random((700, 37)) * 24.0 * 21, axis=1)
    arrival = by_slot(rows)
    np.testing.assert_array_equal(arrival, rows.T)
    np.testing.assert_array_equal(by_slot(rows, 24.0), rows.T * 24.0)
    expected = np.cumsum(np.diff(rows.T, axis=0, prepend=0.0), axis=0)
    assert simpy_clock(arrival).tobytes() == expected.tobytes()
    assert simpy_clock(np.zeros((0, 4))).shape == (0, 4)

"""Ward simulation against queueing theory, bookkeeping identities and the bed rules.

Statistical checks compare means across independent paths (replicates) with the published
formula, within 4 replicate standard errors (Source: Morris, White & Crowther, Stat. Med. 38
(2019); Law, Simulation Modeling and Analysis, ch. 9: across-replicate SEs, 3-4 SE tolerance).
"""

from __future__ import annotations

import random
from datetime import date

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from wards import FixedStay, drawn_ward

from planner.errors import PlannerError
from planner.simulate import fast
from planner.simulate.fast import simulate_ward_fast
from planner.simulate.model import WardModel
from planner.simulate.queueing import (
    erlang_b,
    erlang_c,
    infinite_server_mean,
    inpatients_remaining_mean,
)
from planner.simulate.result import DAILY_COLUMNS, PATH_DAILY, PATH_SHIFTS
from planner.simulate.sampling import DrawnInputs, draw_inputs
from planner.simulate.settings import BedChange, WardSettings
from planner.simulate.stays import Exponential, Gamma, Lognormal, Weibull
from planner.simulate.ward import simulate_drawn, simulate_ward
from planner.summaries.daily import summarise_daily, summarise_shifts

START = date(2024, 1, 1)
#: Every check against theory and every worked example runs on both engines.
BOTH_ENGINES = pytest.mark.parametrize(
    "simulate", [simulate_ward, simulate_ward_fast], ids=["simpy", "fast"]
)
UNIFORM = np.full(24, 1 / 24)  # uniform hour profile: Poisson daily counts give a Poisson process
NONE_IN = np.zeros(0)


def poisson_paths(seed: int, paths: int, rate) -> np.ndarray:
    """Daily Poisson counts (paths x days) at ``rate`` per day (one value per day)."""
    return np.random.default_rng(seed).poisson(rate, size=(paths, len(rate)))


def per_path(result, column: str, days: slice) -> np.ndarray:
    daily = result.daily
    paths = daily["path"].nunique()
    return daily[column].to_numpy(dtype=float).reshape(paths, -1)[:, days]


def replicate_mean_se(values: np.ndarray) -> tuple[float, float]:
    return float(values.mean()), float(values.std(ddof=1) / np.sqrt(values.size))


def blocked_share(result, column: str, warmup: int) -> tuple[float, float]:
    """Share of arrivals after the warm-up that waited or were diverted, pooled over paths
    (blocked patients / arrivals), and its standard error across the independent paths
    (ratio estimator: sd of b_i - R a_i over sqrt(n), divided by the mean arrivals)."""
    after = slice(warmup, None)
    blocked = per_path(result, column, after).sum(1)
    arrived = per_path(result, "admissions", after).sum(1)
    share = blocked.sum() / arrived.sum()
    residual = blocked - share * arrived
    return float(share), float(residual.std(ddof=1) / np.sqrt(arrived.size) / arrived.mean())


# --- Erlang loss (divert policy) and insensitivity ---------------------------------------------


def check_erlang_b(simulate, beds, rate, stays, paths, days, seed):
    arrivals = poisson_paths(seed, paths, np.full(days, rate))
    ward = WardSettings(beds=beds, policy="divert")
    result = simulate(arrivals, WardModel(START, ward, stays, NONE_IN, UNIFORM), seed)
    mean, se = blocked_share(result, "diverted", warmup=30)
    # Source: Erlang B, B(c, lambda E[S]) (Erlang 1917); insensitivity to the stay distribution
    # beyond its mean (Sevastyanov 1957).
    expected = erlang_b(beds, rate * stays.mean)
    assert abs(mean - expected) < 4 * se, (mean, se, expected)
    assert se < 0.2 * expected  # the check has power


@BOTH_ENGINES
@pytest.mark.parametrize(
    ("beds", "rate", "stays"),
    [
        (10, 2.0, Lognormal.from_mean_sd(4.0, 3.0)),  # a = 8
        (5, 1.0, Lognormal.from_mean_sd(3.0, 4.0)),  # a = 3
        (10, 2.0, Gamma.from_mean_sd(4.0, 6.0)),  # same mean, other shape
        (5, 1.0, Weibull.from_mean_sd(3.0, 1.5)),
    ],
)
def test_divert_share_is_erlang_b(simulate, beds, rate, stays):
    check_erlang_b(simulate, beds, rate, stays, paths=150, days=150, seed=11)


@BOTH_ENGINES
@pytest.mark.slow
@pytest.mark.parametrize(
    ("beds", "rate", "stays"),
    [
        (28, 5.0, Lognormal.from_mean_sd(5.0, 4.0)),
        (28, 5.0, Gamma.from_mean_sd(5.0, 2.0)),
        (28, 5.0, Weibull.from_mean_sd(5.0, 8.0)),
        (15, 8.108 / 4.0, Lognormal.from_mean_sd(4.0, 4.0)),  # 1% blocking
    ],
)
def test_divert_share_is_erlang_b_many_paths(simulate, beds, rate, stays):
    check_erlang_b(simulate, beds, rate, stays, paths=1000, days=300, seed=12)


@pytest.mark.slow
def test_divert_share_is_erlang_b_at_hospital_size():
    # 300 beds at 277.1 erlangs: B(300, 277.1) = 0.0100 (computed with the Erlang B recursion,
    # REFERENCES.md), lognormal stays of mean 5 days, on the fast engine.
    stays = Lognormal.from_mean_sd(5.0, 4.0)
    check_erlang_b(simulate_ward_fast, 300, 277.1 / 5.0, stays, paths=200, days=200, seed=13)


# --- Erlang delay (wait policy), Little's law ----------------------------------------------------


@BOTH_ENGINES
@pytest.mark.parametrize(
    ("beds", "rate", "mean", "paths"), [(5, 1.0, 2.5, 150), (3, 1.0, 2.0, 150)]
)
def test_wait_share_is_erlang_c(simulate, beds, rate, mean, paths):
    arrivals = poisson_paths(3, paths, np.full(150, rate))
    ward = WardSettings(beds=beds, policy="wait")
    result = simulate(
        arrivals, WardModel(START, ward, Exponential.from_mean(mean), NONE_IN, UNIFORM), 3
    )
    share, se = blocked_share(result, "waited", warmup=30)
    # Source: Erlang C, M/M/c probability of waiting (REFERENCES.md).
    expected = erlang_c(beds, rate * mean)
    assert abs(share - expected) < 4 * se, (share, se, expected)


@BOTH_ENGINES
def test_littles_law_in_wait_mode(simulate):
    rate, days, warmup, tail = 1.6, 200, 30, 20
    stays = Lognormal.from_mean_sd(2.5, 2.0)
    arrivals = poisson_paths(5, 200, np.full(days, rate))
    result = simulate(arrivals, WardModel(START, WardSettings(beds=5), stays, NONE_IN, UNIFORM), 5)
    window = slice(warmup, days - tail)  # leave time for the last patients' waits to finish
    in_system = (per_path(result, "census", window) + per_path(result, "queue", window)).mean(1)
    admissions = per_path(result, "admissions", window).sum(1)
    mean_wait_days = per_path(result, "wait_hours", window).sum(1) / 24 / admissions
    # Source: Little (1961), L = lambda W with W = mean wait + mean stay (days); the time average
    # is sampled at midnights, which a stationary queue makes unbiased.
    gap, se = replicate_mean_se(in_system - rate * (mean_wait_days + stays.mean))
    assert abs(gap) < 4 * se, (gap, se)
    assert mean_wait_days.mean() > 0.05  # patients do wait, so the wait term is tested


# --- Unlimited beds: Mt/G/infinity --------------------------------------------------------------


def check_infinite_server(paths, seed):
    days = np.arange(56)
    rate = 5.0 * (1 + 0.6 * np.sin(2 * np.pi * days / 7))  # weekly cycle, constant within a day
    stays = Lognormal.from_mean_sd(5.0, 4.0)
    arrivals = poisson_paths(seed, paths, rate)
    result = simulate_ward(
        arrivals, WardModel(START, WardSettings(beds=100_000), stays, NONE_IN, UNIFORM), seed
    )
    census = per_path(result, "census", slice(None))
    # Source: Eick, Massey & Whitt (1993): m(t) = integral lambda(u) P(S > t - u) du, and the
    # occupancy is Poisson (variance = mean); census is taken at 24:00, t = d + 1 days.
    expected = infinite_server_mean(days + 1.0, rate, stays.survival)
    se = census.std(axis=0, ddof=1) / np.sqrt(paths)
    assert np.all(np.abs(census.mean(axis=0) - expected) < 4 * se + 1e-9)
    dispersion = census[:, 14:].var(axis=0, ddof=1) / census[:, 14:].mean(axis=0)
    assert abs(dispersion.mean() - 1.0) < 0.08
    assert np.ptp(expected[14:]) > 3  # the weekly cycle shows in the mean


def test_unlimited_beds_follow_infinite_server_mean():
    check_infinite_server(paths=300, seed=21)


@pytest.mark.slow
def test_unlimited_beds_follow_infinite_server_mean_many_paths():
    check_infinite_server(paths=3000, seed=22)


# --- Current inpatients --------------------------------------------------------------------------


@BOTH_ENGINES
@pytest.mark.parametrize("stays", [Lognormal.from_mean_sd(6.0, 5.0), Gamma.from_mean_sd(6.0, 3.0)])
def test_current_inpatients_leave_by_conditional_survival(simulate, stays):
    elapsed = np.array([0.0, 0.5, 1.0, 2.0, 3.0, 4.0, 6.0, 8.0, 12.0, 20.0] * 3)
    arrivals = np.zeros((600, 20), dtype=int)
    result = simulate(arrivals, WardModel(START, WardSettings(beds=40), stays, elapsed, UNIFORM), 8)
    census = per_path(result, "census", slice(None))
    # Source: conditional survival, E[in bed at t] = sum_i P(S > e_i + t) / P(S > e_i).
    expected = inpatients_remaining_mean(np.arange(1.0, 21.0), elapsed, stays.survival)
    se = census.std(axis=0, ddof=1) / np.sqrt(census.shape[0])
    assert np.all(np.abs(census.mean(axis=0) - expected) < 4 * se + 1e-9)


# --- Bookkeeping ---------------------------------------------------------------------------------


def totals(result, column: str) -> np.ndarray:
    return result.daily.groupby("path")[column].sum().to_numpy()


def last_day(result, column: str) -> np.ndarray:
    return result.daily.groupby("path")[column].last().to_numpy()


def assert_books_balance(result, inpatients: int):
    """Conservation per path and the day-by-day census balance."""
    arrived = totals(result, "admissions") + inpatients
    left = (
        totals(result, "discharges")
        + last_day(result, "census")
        + totals(result, "diverted")
        + last_day(result, "queue")
    )
    np.testing.assert_array_equal(arrived, left)
    for _, day in result.daily.groupby("path"):
        before = np.concatenate([[inpatients], day["census"].to_numpy()[:-1]])
        change = day["bed_admissions"].to_numpy() - day["discharges"].to_numpy()
        np.testing.assert_array_equal(day["census"].to_numpy(), before + change)
        queue_before = np.concatenate([[0], day["queue"].to_numpy()[:-1]])
        joined = day["bed_admissions"] - (day["admissions"] - day["waited"] - day["diverted"])
        np.testing.assert_array_equal(day["queue"], queue_before + day["waited"] - joined)


CLOSURES = (BedChange(date(2024, 1, 5), date(2024, 1, 12), -6), BedChange(START, START, 3))


@BOTH_ENGINES
@pytest.mark.parametrize("policy", ["wait", "divert"])
def test_conservation_and_daily_balance(simulate, policy):
    elapsed = np.linspace(0, 9, 18)
    arrivals = poisson_paths(2, 40, np.full(30, 4.5))
    ward = WardSettings(beds=20, bed_changes=CLOSURES, policy=policy)
    result = simulate(
        arrivals, WardModel(START, ward, Lognormal.from_mean_sd(5, 4), elapsed, UNIFORM), 2
    )
    assert_books_balance(result, inpatients=elapsed.size)
    never = "diverted" if policy == "wait" else "waited"
    assert (result.daily[never] == 0).all()
    np.testing.assert_array_equal(
        result.daily["beds_open"].to_numpy()[:14], [23] + [20] * 3 + [14] * 8 + [20] * 2
    )


@BOTH_ENGINES
def test_same_seed_same_result_and_chunks_match(simulate):
    arrivals = poisson_paths(4, 10, np.full(20, 5.0))
    ward = WardSettings(beds=15)
    stays = Lognormal.from_mean_sd(5, 4)
    elapsed = np.array([1.0, 2.0, 7.0])
    whole = simulate(arrivals, WardModel(START, ward, stays, elapsed, UNIFORM), 99)
    again = simulate(arrivals, WardModel(START, ward, stays, elapsed, UNIFORM), 99)
    head = simulate(arrivals[:4], WardModel(START, ward, stays, elapsed, UNIFORM), 99)
    tail = simulate(arrivals[4:], WardModel(START, ward, stays, elapsed, UNIFORM), 99, first_path=4)
    assert whole.daily.equals(again.daily) and whole.shifts.equals(again.shifts)
    assert whole.daily.iloc[: 4 * 20].equals(head.daily)
    np.testing.assert_array_equal(whole.daily.iloc[4 * 20 :].to_numpy(), tail.daily.to_numpy())
    other = simulate(arrivals, WardModel(START, ward, stays, elapsed, UNIFORM), 100)
    assert not whole.daily.equals(other.daily)


def assert_same_result(result, other):
    for name in (*PATH_DAILY, *PATH_SHIFTS):
        np.testing.assert_array_equal(getattr(result, name), getattr(other, name), err_msg=name)
    assert result.first_path == other.first_path


def test_two_ward_plans_share_random_inputs():
    # Common random numbers: the random inputs do not depend on beds or policy, and the model
    # reads nothing random besides them, so two plans see the same patients.
    arrivals = poisson_paths(6, 5, np.full(30, 5.0))
    plans = [WardSettings(beds=18), WardSettings(beds=30, policy="divert", bed_changes=CLOSURES)]
    stays = Gamma.from_mean_sd(5, 3)
    models = [WardModel(START, ward, stays, np.array([1.0, 4.0]), UNIFORM) for ward in plans]
    drawn = [draw_inputs(model, arrivals, 7) for model in models]
    for name in ("offsets", "arrival_hours", "stay_days", "remaining_days"):
        np.testing.assert_array_equal(getattr(drawn[0], name), getattr(drawn[1], name))
    for model, inputs in zip(models, drawn, strict=True):
        assert_same_result(simulate_ward(arrivals, model, 7), simulate_drawn(inputs, model, 30))


class NoDraws:
    """Stays that refuse to be drawn: the model must take them from its inputs."""

    inverse_transform = True
    mean = 1.0

    def from_uniforms(self, *arguments):
        raise AssertionError("stays drawn inside the ward model")

    remaining_from_uniforms = sample = sample_remaining = from_uniforms


def test_the_model_draws_no_random_numbers(monkeypatch):
    arrivals = poisson_paths(13, 4, np.full(10, 4.0))
    ward = WardSettings(beds=6, bed_changes=CLOSURES)
    elapsed = np.array([0.5, 2.0, 3.0])
    model = WardModel(START, ward, Lognormal.from_mean_sd(3, 2), elapsed, UNIFORM)
    inputs = draw_inputs(model, arrivals, 13, first_path=5)
    expected = simulate_ward(arrivals, model, 13, first_path=5)

    def refuse(*arguments, **keywords):
        raise AssertionError("random numbers drawn inside the ward model")

    for name in ("default_rng", "Generator", "PCG64", "SeedSequence", "RandomState", "random"):
        monkeypatch.setattr(np.random, name, refuse)
    monkeypatch.setattr(random, "random", refuse)
    refusing = WardModel(START, ward, NoDraws(), elapsed, UNIFORM)
    # The same inputs give the same result twice, and the seed acts only through draw_inputs.
    assert_same_result(simulate_drawn(inputs, refusing, 10), expected)
    assert_same_result(simulate_drawn(inputs, refusing, 10), expected)


@BOTH_ENGINES
def test_closing_beds_moves_nobody(simulate):
    # Worked example of the closing-bed rule: 10 beds, 10 patients each with 4.5 days to go;
    # 5 beds close from day 1 to day 9. Nobody is moved, nobody new is admitted until the
    # 10 leave at 108 h (day 4), after which the ward holds at most the 5 beds open.
    arrivals = np.full((1, 12), 2)
    ward = WardSettings(
        beds=10, policy="divert", bed_changes=(BedChange(date(2024, 1, 2), date(2024, 1, 10), -5),)
    )
    result = simulate(arrivals, WardModel(START, ward, FixedStay(4.5), np.zeros(10), UNIFORM), 1)
    daily = result.daily
    np.testing.assert_array_equal(daily["census"][:4], 10)
    np.testing.assert_array_equal(daily["peak_occupancy"][:4], 10)
    np.testing.assert_array_equal(daily["beds_open"][:4], [10, 5, 5, 5])
    np.testing.assert_array_equal(daily["diverted"][:4], 2)
    np.testing.assert_array_equal(daily["bed_admissions"][:4], 0)
    assert daily["discharges"][4] == 10
    assert (daily["peak_occupancy"][5:10] <= 5).all()


@BOTH_ENGINES
def test_waiting_patients_take_beds_first_come_first_served(simulate):
    # Worked example: 1 bed, fixed 1-day stays, 3 arrivals on day 0 and none after. The first
    # takes the bed; the others wait one and two days: (t1 + 24 - t2) + (t1 + 48 - t3) hours.
    arrivals = np.array([[3, 0, 0, 0, 0]])
    model = WardModel(START, WardSettings(beds=1), FixedStay(1.0), NONE_IN, UNIFORM)
    result = simulate(arrivals, model, 4)
    daily = result.daily
    assert daily["waited"].tolist() == [2, 0, 0, 0, 0]
    assert daily["queue"].tolist() == [2, 1, 0, 0, 0]
    assert daily["bed_admissions"].tolist() == [1, 1, 1, 0, 0]
    assert daily["discharges"].tolist() == [0, 1, 1, 1, 0]
    t1, t2, t3 = draw_inputs(model, arrivals, 4).arrival_hours
    assert daily["wait_hours"][0] == (t1 + 24.0 - t2) + (t1 + 24.0 + 24.0 - t3)


# --- Worked examples with inputs written by hand -------------------------------------------------


def by_hand(arrival_hours, stay_days, remaining_days) -> DrawnInputs:
    """One path's random inputs written out: arrival hours (since 00:00 of day 0), stays and
    remaining stays of the patients in at the start (days)."""
    hours = np.asarray(arrival_hours, dtype=float)
    return DrawnInputs(
        first_path=0,
        offsets=np.array([0, hours.size]),
        arrival_hours=hours,
        stay_days=np.asarray(stay_days, dtype=float),
        remaining_days=np.asarray(remaining_days, dtype=float).reshape(1, -1),
    )


def run_by_hand(simulate, ward: WardSettings, inputs: DrawnInputs, days: int) -> dict[str, list]:
    """The daily records of one path from written-out inputs, by the engine of ``simulate``."""
    elapsed = np.zeros(inputs.remaining_days.shape[1])
    model = WardModel(START, ward, FixedStay(1.0), elapsed, UNIFORM)
    drawn = simulate_drawn if simulate is simulate_ward else fast.simulate_drawn
    result = drawn(inputs, model, days)
    daily = {name: getattr(result, name)[0].tolist() for name in PATH_DAILY}
    return daily | {"beds_open": result.beds_open.tolist()}


@BOTH_ENGINES
def test_closure_on_a_full_ward_waits_for_its_patient(simulate):
    # 3 beds, 3 patients in with 1.5, 2.5 and 3.5 days to go (out at 36, 60 and 84 h); 2 beds
    # close from day 1. A patient arriving at 20 h waits; the closures come before the patient,
    # so the beds freed at 36 and 60 h close, and the patient takes the one freed at 84 h and
    # stays 24 h. Nobody is moved at 24 h. Hand count:
    ward = WardSettings(beds=3, bed_changes=(BedChange(date(2024, 1, 2), date(2024, 1, 6), -2),))
    daily = run_by_hand(simulate, ward, by_hand([20.0], [1.0], [1.5, 2.5, 3.5]), days=6)
    assert daily["beds_open"] == [3, 1, 1, 1, 1, 1]
    assert daily["census"] == [3, 2, 1, 1, 0, 0]
    assert daily["peak_occupancy"] == [3, 3, 2, 1, 1, 0]
    assert daily["discharges"] == [0, 1, 1, 1, 1, 0]
    assert daily["bed_admissions"] == [0, 0, 0, 1, 0, 0]
    assert daily["waited"] == [1, 0, 0, 0, 0, 0]
    assert daily["queue"] == [1, 1, 1, 0, 0, 0]
    assert daily["wait_hours"] == [84.0 - 20.0, 0.0, 0.0, 0.0, 0.0, 0.0]


@BOTH_ENGINES
def test_waiting_patient_takes_a_bed_when_beds_reopen_at_midnight(simulate):
    # 1 bed, closed on days 1 and 2; a patient arriving at 30 h waits until the bed reopens at
    # 00:00 of day 3 (72 h), then stays 24 h. Hand count:
    ward = WardSettings(beds=1, bed_changes=(BedChange(date(2024, 1, 2), date(2024, 1, 3), -1),))
    daily = run_by_hand(simulate, ward, by_hand([30.0], [1.0], []), days=5)
    assert daily["beds_open"] == [1, 0, 0, 1, 1]
    assert daily["waited"] == [0, 1, 0, 0, 0]
    assert daily["wait_hours"] == [0.0, 72.0 - 30.0, 0.0, 0.0, 0.0]
    assert daily["bed_admissions"] == [0, 0, 0, 1, 0]  # at 72 h: day 3
    assert daily["queue"] == [0, 1, 1, 0, 0]
    assert daily["census"] == [0, 0, 0, 1, 0]
    assert daily["peak_occupancy"] == [0, 0, 0, 1, 1]  # the level at 96 h, before the discharge
    assert daily["discharges"] == [0, 0, 0, 0, 1]


@BOTH_ENGINES
def test_closure_still_waiting_when_beds_reopen_is_withdrawn(simulate):
    # 2 beds, both taken by patients with 3.5 and 4.5 days to go (out at 84 and 108 h); 1 bed
    # closes on day 1 only. The closure waits and is withdrawn at 48 h, so the patient arriving
    # at 30 h takes the bed freed at 84 h (a closure left waiting would take it instead).
    ward = WardSettings(beds=2, bed_changes=(BedChange(date(2024, 1, 2), date(2024, 1, 2), -1),))
    daily = run_by_hand(simulate, ward, by_hand([30.0], [1.0], [3.5, 4.5]), days=6)
    assert daily["beds_open"] == [2, 1, 2, 2, 2, 2]
    assert daily["wait_hours"] == [0.0, 84.0 - 30.0, 0.0, 0.0, 0.0, 0.0]
    assert daily["bed_admissions"] == [0, 0, 0, 1, 0, 0]
    assert daily["census"] == [2, 2, 2, 2, 0, 0]  # both out at 108 h


@BOTH_ENGINES
def test_divert_while_a_closure_waits(simulate):
    # 2 beds, patients in until 36 and 84 h; 1 bed closes from day 1. Arrivals at 30 h (ward
    # full), at 36 h (a bed frees at that instant but the waiting closure takes it) and at 40 h
    # (1 in, 1 open) are diverted; the one at 90 h gets the bed freed at 84 h. Hand count:
    ward = WardSettings(
        beds=2, policy="divert", bed_changes=(BedChange(date(2024, 1, 2), date(2024, 1, 5), -1),)
    )
    daily = run_by_hand(
        simulate, ward, by_hand([30.0, 36.0, 40.0, 90.0], [1.0] * 4, [1.5, 3.5]), days=5
    )
    assert daily["beds_open"] == [2, 1, 1, 1, 1]
    assert daily["diverted"] == [0, 3, 0, 0, 0]
    assert daily["bed_admissions"] == [0, 0, 0, 1, 0]
    assert daily["discharges"] == [0, 1, 0, 1, 1]
    assert daily["census"] == [2, 1, 1, 1, 0]
    assert daily["peak_occupancy"] == [2, 2, 1, 1, 1]
    assert daily["waited"] == [0] * 5 and daily["wait_hours"] == [0.0] * 5


# --- Properties ----------------------------------------------------------------------------------


@BOTH_ENGINES
@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    counts=st.lists(st.integers(0, 9), min_size=1, max_size=14),
    beds=st.integers(0, 8),
    changes=st.lists(
        st.tuples(st.integers(0, 13), st.integers(0, 5), st.integers(-4, 3)), max_size=3
    ),
    policy=st.sampled_from(["wait", "divert"]),
    inpatients=st.integers(0, 12),
    seed=st.integers(0, 2**32 - 1),
)
def test_properties(simulate, counts, beds, changes, policy, inpatients, seed):
    ward = drawn_ward(beds, changes, policy)
    arrivals = np.array([counts, counts[::-1]])
    elapsed = np.linspace(0.0, 5.0, inpatients)
    result = simulate(
        arrivals, WardModel(START, ward, Weibull.from_mean_sd(2, 2), elapsed, UNIFORM), seed
    )
    daily = result.daily
    assert (daily[["census", "peak_occupancy", "queue", "discharges"]] >= 0).all().all()
    assert (daily["peak_occupancy"] >= daily["census"]).all()
    assert_books_balance(result, inpatients)
    # Occupancy exceeds beds open only through patients already in when beds closed.
    for _, day in daily.groupby("path"):
        carried = np.concatenate([[inpatients], day["census"].to_numpy()[:-1]])
        assert (day["peak_occupancy"] <= np.maximum(day["beds_open"], carried)).all()
        if not ward.bed_changes and inpatients <= ward.beds:
            assert (day["peak_occupancy"] <= day["beds_open"]).all()
    shifts = result.shifts
    assert (
        shifts["shortfall"] == np.maximum(shifts["nurses_required"] - shifts["nurses_rostered"], 0)
    ).all()
    assert (shifts["nurses_required"] >= ward.staffing.minimum_nurses).all()


# --- Staffing table, summaries, errors -----------------------------------------------------------


@BOTH_ENGINES
def test_shift_table_follows_occupancy(simulate):
    arrivals = poisson_paths(9, 30, np.full(14, 6.0))
    result = simulate(
        arrivals,
        WardModel(
            START, WardSettings(beds=28), Lognormal.from_mean_sd(5, 4), np.zeros(20), UNIFORM
        ),
        9,
    )
    shifts = result.shifts.set_index(["path", "date", "shift"])
    daily = result.daily.set_index(["path", "date"])
    day_shift = shifts.xs("day", level="shift")
    # The 07-19 shift lies inside the day, so its peak is at most the day's peak.
    assert (day_shift["peak_occupancy"] <= daily["peak_occupancy"]).all()
    # Source: Queensland ratio 1:4 by day, NICE SG1 minimum 2 (REFERENCES.md).
    expected = np.maximum(np.ceil(day_shift["peak_occupancy"] / 4), 2)
    np.testing.assert_array_equal(day_shift["nurses_required"], expected)
    assert result.shifts["nurses_rostered"].tolist()[:2] == [5, 3]
    assert list(result.shifts.dtypes.astype(str))[3:] == ["int32"] * 4


@BOTH_ENGINES
def test_tidy_tables_are_the_arrays_row_by_row(simulate):
    arrivals = poisson_paths(12, 3, np.full(5, 5.0))
    ward = WardSettings(beds=6, bed_changes=CLOSURES)
    stays = Exponential.from_mean(2.0)
    result = simulate(
        arrivals, WardModel(START, ward, stays, np.ones(4), UNIFORM), 12, first_path=7
    )
    daily = result.daily
    assert list(daily.columns) == ["path", "date", *DAILY_COLUMNS]
    assert daily["date"].dtype == "datetime64[s]" and daily["wait_hours"].dtype == "float64"
    counts = ["path", *(name for name in DAILY_COLUMNS if name != "wait_hours")]
    assert all(daily[name].dtype == "int32" for name in counts)
    assert daily["path"].tolist() == [7] * 5 + [8] * 5 + [9] * 5
    assert daily["date"].iloc[:5].dt.day.tolist() == [1, 2, 3, 4, 5]
    np.testing.assert_array_equal(daily["census"].to_numpy().reshape(3, 5), result.census)
    # 6 beds, +3 on the first day, -6 from Jan 5 (hand count from the bed changes).
    np.testing.assert_array_equal(daily["beds_open"].iloc[5:10], [9, 6, 6, 6, 0])
    shifts = result.shifts
    assert list(shifts.columns) == ["path", "date", "shift", "peak_occupancy", "nurses_required",
                                    "nurses_rostered", "shortfall"]  # fmt: skip
    assert list(shifts["shift"].cat.categories) == ["day", "night"]
    assert shifts["shift"].iloc[:4].tolist() == ["day", "night", "day", "night"]
    np.testing.assert_array_equal(shifts["shortfall"].to_numpy().reshape(3, 5, 2), result.shortfall)


@BOTH_ENGINES
def test_summaries_across_paths(simulate):
    arrivals = poisson_paths(10, 200, np.full(10, 6.0))
    ward = WardSettings(beds=25, policy="divert")
    result = simulate(
        arrivals, WardModel(START, ward, Lognormal.from_mean_sd(5, 4), np.zeros(22), UNIFORM), 10
    )
    daily = summarise_daily(result)
    assert len(daily) == 10 and (daily["beds_open"] == 25).all()
    census = result.daily.pivot(index="path", columns="date", values="census").to_numpy()
    # Source: numpy.quantile (linear interpolation) as the reference.
    np.testing.assert_allclose(daily["census_p90"], np.quantile(census, 0.9, axis=0))
    diverted = result.daily.pivot(index="path", columns="date", values="diverted").to_numpy()
    np.testing.assert_allclose(daily["p_no_bed"], (diverted > 0).mean(axis=0))
    quantiles = daily.filter(like="census_p").to_numpy()
    assert (np.diff(quantiles, axis=1) >= 0).all()
    shifts = summarise_shifts(result)
    assert len(shifts) == 20 and set(shifts["shift"]) == {"day", "night"}
    short = result.shifts.pivot_table(index=["date", "shift"], values="shortfall", observed=True,
                                      aggfunc=lambda s: (s > 0).mean())  # fmt: skip
    np.testing.assert_allclose(shifts["p_short"], short["shortfall"].to_numpy())


@BOTH_ENGINES
@pytest.mark.parametrize(
    ("change", "message"),
    [
        ({"settings": WardSettings(beds=28, policy="queue")}, "policy"),
        (
            {"settings": WardSettings(beds=2, bed_changes=(BedChange(START, START, -3),))},
            "negative",
        ),
        ({"hour_profile": np.full(24, 0.05)}, "hour_profile"),
        ({"arrivals": np.array([[1, -1]])}, "arrivals"),
        ({"inpatients_elapsed": np.array([-1.0])}, "inpatients_elapsed"),
    ],
)
def test_bad_inputs_raise(simulate, change, message):
    model = {
        "start": START,
        "settings": WardSettings(beds=28),
        "stays": Exponential.from_mean(3.0),
        "inpatients_elapsed": NONE_IN,
        "hour_profile": UNIFORM,
    }
    change = dict(change)  # the same case runs on both engines
    arrivals = change.pop("arrivals", np.array([[1, 2]]))
    with pytest.raises(PlannerError, match=message):
        simulate(arrivals, WardModel(**(model | change)), 0)

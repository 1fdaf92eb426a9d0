"""Calendar discharge timing in the simulation: the draws against their definitions, both
engines against each other, the census against the infinite-server formula computed exactly,
the reduction to the continuous model, and the levers' direction on a known process.

The hazard and hour profiles here are invented (a known process), written out as a
:class:`DischargeTiming` without a fit; the exact values are computed from the hazard by
the definitions below, not by the code under test.
"""

from __future__ import annotations

import math
from dataclasses import replace
from datetime import date

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from scipy import stats

from planner.errors import PlannerError
from planner.simulate import fast, ward
from planner.simulate.discharge_fit import DischargeTiming
from planner.simulate.discharge_times import (
    DischargeTables,
    clock_time,
    discharge_day,
    discharge_hours,
    remaining_days,
)
from planner.simulate.model import WardModel
from planner.simulate.sampling import draw_inputs
from planner.simulate.settings import BedChange, WardSettings
from planner.simulate.stays import Empirical, Exponential

START = date(2024, 1, 1)  # a Monday (from memory; checked in test_discharge_fit.py)
HAZARD = np.array([0.05, 0.20, 0.25, 0.25, 0.22, 0.20, 0.20, 0.18, 0.18, 0.15, 0.12])
ALPHA = np.log(HAZARD / (1 - HAZARD))
BETA = np.array([0.0, 0.0, 0.0, 0.0, 0.2, math.log(0.4), math.log(0.5)])
# Discharges 09:00-20:00 only (so a late admission finds nothing left that day), weekdays
# peaking mid-afternoon, weekends late morning.
WEEKDAY_HOURS = np.array([1, 2, 3, 4, 6, 9, 12, 12, 9, 6, 3], dtype=float)
WEEKEND_HOURS = np.array([3, 6, 9, 9, 8, 6, 4, 3, 2, 1, 1], dtype=float)
PROFILE = np.zeros((7, 24))
PROFILE[:5, 9:20] = WEEKDAY_HOURS / WEEKDAY_HOURS.sum()
PROFILE[5:, 9:20] = WEEKEND_HOURS / WEEKEND_HOURS.sum()
ARRIVAL = np.array([1, 1, 1, 1, 1, 1, 2, 3, 5, 8, 9, 9, 8, 8, 7, 7, 6, 5, 4, 3, 3, 2, 1, 1], float)
ARRIVAL /= ARRIVAL.sum()
FLAT = np.full(24, 1 / 24)


def timing(alpha=ALPHA, beta=BETA, profile=PROFILE) -> DischargeTiming:
    """A known discharge timing (no fit: zero covariance)."""
    size = alpha.size + 6
    return DischargeTiming(alpha, beta, np.zeros((size, size)), profile, profile.mean(axis=0),
                           np.ones(7, dtype=np.int64), 1, 1, 0.0)  # fmt: skip


def survival(alpha, beta, weekday: int, days: int) -> np.ndarray:
    """S_w(k), k = 0..days-1: the product over days of stay j <= k of 1 - h(j, weekday + j),
    h the logistic of alpha (the last one from then on) plus beta (definition of the
    discrete-time survival function)."""
    k = np.arange(days)
    logit = alpha[np.minimum(k, alpha.size - 1)] + beta[(weekday + k) % 7]
    return np.cumprod(1.0 - 1.0 / (1.0 + np.exp(-logit)))


NONE_IN = np.zeros(0)


def model(beds=10_000, policy="wait", elapsed=NONE_IN, discharges=None, arrival=ARRIVAL):
    return WardModel(START, WardSettings(beds=beds, policy=policy), Exponential(4.0), elapsed,
                     arrival, discharges)  # fmt: skip


# --- the draws against their definitions ---------------------------------------------------


@pytest.mark.parametrize("first", [0, 1, 3, 12, 25, 40])
def test_day_of_stay_inverts_the_survival_function(first):
    # Source: inversion (Devroye 1986, Non-Uniform Random Variate Generation, section II.2):
    # the day drawn from u is the least k >= first with S_w(k) < (1 - u) S_w(first - 1),
    # here found by brute force over 600 days from the hazard written out above.
    tables = DischargeTables.build(timing(), 0)
    u = np.random.default_rng(5).random(2000)
    for w in range(7):
        curve = survival(ALPHA, BETA, w, 600)
        before = 1.0 if first == 0 else curve[first - 1]
        for value in u:
            got = discharge_day(tables.survival, tables.week_stay, w, first, value)
            target = (1.0 - value) * before
            want = first + int(np.argmax(curve[first:] < target))
            assert got == want, (w, value)


def test_new_patients_day_and_hour_from_the_bucket_tables():
    # Source: inversion as above, for a new patient: the day of stay is the number of values
    # of 1 - S_w(k) (k = 0, 1, ...) at or below u, found by brute force over 600 days; the
    # clock time of a later day is the hour profile inverted (clock_time, checked above).
    discharges = timing()
    tables = DischargeTables.build(discharges, 0)
    rng = np.random.default_rng(8)
    bed = rng.uniform(0, 24 * 14, 20_000)
    u, v = rng.random(bed.size), rng.random(bed.size)
    u[:50] = 1.0 - 1e-9  # far into the pooled weeks
    leave = discharge_hours(tables, bed, u, v)
    day = np.floor(bed / 24).astype(int)
    curves = [1.0 - survival(ALPHA, BETA, w, 600) for w in range(7)]
    want = np.array([np.sum(curves[d % 7] <= x) for d, x in zip(day, u, strict=True)])
    np.testing.assert_array_equal(np.floor(leave / 24).astype(int) - day, want)
    later = want > 0
    clock = [clock_time(tables.hour_cdf, (d + k) % 7, 0.0, x)
             for d, k, x in zip(day[later], want[later], v[later], strict=True)]  # fmt: skip
    np.testing.assert_allclose(leave[later] % 24, clock, rtol=0, atol=1e-9)


def test_day_of_stay_shares_are_the_hazard_model():
    # Source: definition of the discrete-time hazard: P(discharge on day k) = S(k-1) - S(k).
    tables = DischargeTables.build(timing(), 0)
    u = (np.arange(200_000) + 0.5) / 200_000  # an even grid: shares exact to 1 / 200,000
    for w in (0, 4, 6):
        days = np.array([discharge_day(tables.survival, tables.week_stay, w, 0, x) for x in u])
        curve = np.concatenate(([1.0], survival(ALPHA, BETA, w, 60)))
        shares = np.bincount(days, minlength=61)[:60] / u.size
        np.testing.assert_allclose(shares, curve[:-1] - curve[1:], atol=1e-5)


def test_clock_time_follows_the_hour_profile_after_the_bed_time():
    # Source: definition: the clock time is drawn from the weekday's hour shares read as a
    # density even within each hour, conditioned on following the bed time ``after``; with
    # nothing left after it, evenly over the rest of the day (module docstring's rule).
    tables = DischargeTables.build(timing(), 0)
    v = (np.arange(48_000) + 0.5) / 48_000
    for weekday, after in ((0, 0.0), (2, 13.25), (5, 10.5), (3, 21.0)):
        x = np.array([clock_time(tables.hour_cdf, weekday, after, value) for value in v])
        assert np.all((x >= after) & (x < 24.0))
        shares = np.bincount(x.astype(int), minlength=24) / v.size
        density = PROFILE[weekday].copy()
        hour = int(after)
        density[:hour] = 0.0
        density[hour] *= hour + 1 - after
        if density.sum() == 0:  # nothing left: even over the rest of the day
            density = np.clip(np.arange(1, 25) - after, 0, 1)
        np.testing.assert_allclose(shares, density / density.sum(), atol=1e-4)


def test_patients_on_the_ward_keep_their_day_of_stay_and_leave_after_the_start():
    # Source: conditional survival: a patient on day of stay j at the start leaves on day
    # k >= j with probability (S(k-1) - S(k)) / S(j-1) (definition), checked on an even grid.
    tables = DischargeTables.build(timing(), 0)
    grid = (np.arange(20_000) + 0.5) / 20_000
    for elapsed in (0.4, 2.75, 30.1):
        days_in = math.ceil(elapsed)  # admitted on day -days_in: now on day of stay days_in
        weekday = (-days_in) % 7
        got = remaining_days(tables, np.full(grid.size, elapsed), grid, grid[::-1])
        assert np.all(got > 0)
        k = np.floor(got).astype(int) + days_in
        curve = np.concatenate(([1.0], survival(ALPHA, BETA, weekday, 80)))
        want = (curve[days_in:-1] - curve[days_in + 1 :]) / curve[days_in]
        shares = np.bincount(k, minlength=80)[days_in:80] / grid.size
        np.testing.assert_allclose(shares, want[: shares.size], atol=2e-4)


def test_calendar_draws_reuse_the_continuous_uniforms():
    # Common random numbers: switching to calendar timing keeps every arrival time and gives
    # patient k the uniform that drew its continuous stay (S(stay) = 1 - u for exponential).
    counts = np.random.default_rng(2).poisson(5.0, size=(6, 14))
    elapsed = np.array([0.3, 1.5, 4.0])
    continuous = draw_inputs(model(elapsed=elapsed), counts, 11)
    calendar = draw_inputs(model(elapsed=elapsed, discharges=timing()), counts, 11)
    np.testing.assert_array_equal(calendar.arrival_hours, continuous.arrival_hours)
    np.testing.assert_allclose(-4.0 * np.log(1.0 - calendar.stay_days), continuous.stay_days)
    assert calendar.clock_uniforms.shape == calendar.stay_days.shape
    assert np.all(calendar.remaining_days > 0)


# --- both engines --------------------------------------------------------------------------


def assert_engines_agree(arrivals, ward_model, seed):
    inputs = draw_inputs(ward_model, arrivals, seed)
    simpy = ward.simulate_drawn(inputs, ward_model, arrivals.shape[1])
    compiled = fast.simulate_drawn(inputs, ward_model, arrivals.shape[1])
    pd.testing.assert_frame_equal(compiled.daily, simpy.daily, check_exact=True)
    pd.testing.assert_frame_equal(compiled.shifts, simpy.shifts, check_exact=True)


@pytest.mark.parametrize("policy", ["wait", "divert"])
def test_engines_agree_with_calendar_discharges(policy):
    changes = (BedChange(date(2024, 1, 6), date(2024, 1, 12), -4),)
    settings_ = WardSettings(beds=14, policy=policy, bed_changes=changes)
    ward_model = replace(model(discharges=timing(), elapsed=np.linspace(0.1, 9, 12)),
                         settings=settings_)  # fmt: skip
    arrivals = np.random.default_rng(3).poisson(3.6, size=(30, 28))
    assert_engines_agree(arrivals, ward_model, 4)


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    rate=st.floats(0.5, 8.0),
    beds=st.integers(1, 20),
    policy=st.sampled_from(["wait", "divert"]),
    inpatients=st.integers(0, 15),
    seven_day=st.floats(0.0, 1.0),
    earlier=st.integers(0, 12),
    seed=st.integers(0, 2**32 - 1),
)
def test_engines_agree_on_random_calendar_wards(
    rate, beds, policy, inpatients, seven_day, earlier, seed
):
    discharges = timing().seven_day(seven_day).earlier(earlier)
    elapsed = np.random.default_rng(seed).uniform(0, 10, inpatients)
    ward_model = model(beds, policy, elapsed, discharges)
    arrivals = np.random.default_rng(seed).poisson(rate, size=(4, 15))
    assert_engines_agree(arrivals, ward_model, seed)


# --- the census against the infinite-server formula -----------------------------------------


def still_in(alpha, beta, profile, arrival_day, day, hour) -> float:
    """P(a patient admitted on ``arrival_day`` at a time drawn from ARRIVAL is on the ward at
    ``hour`` of ``day``), from the definitions: on a later day, S(k) + (S(k-1) - S(k)) P(the
    discharge clock time > hour); on the same day, integrated over the admission time x0 < hour
    by the midpoint rule (200 points an hour), the day-0 discharge following x0."""
    w = (START.weekday() + arrival_day) % 7
    curve = np.concatenate(([1.0], survival(alpha, beta, w, day - arrival_day + 1)))
    cdf = np.concatenate(([0.0], np.cumsum(profile[(START.weekday() + day) % 7])))

    def after(y):  # P(clock time <= y): even within each hour
        h = min(int(y), 23)
        return cdf[h] + (y - h) * (cdf[h + 1] - cdf[h])

    if day > arrival_day:
        k = day - arrival_day
        return curve[k + 1] + (curve[k] - curve[k + 1]) * (1.0 - after(hour))
    x0 = (np.arange(int(200 * hour)) + 0.5) / 200
    left = np.array([1.0 - after(x) for x in x0])
    gone = 1.0 - after(hour)
    stays_on = np.where(left > 1e-12, gone / np.maximum(left, 1e-300), (24 - hour) / (24 - x0))
    density = ARRIVAL[x0.astype(int)] / 200
    return float(np.sum(density * (curve[1] + (1.0 - curve[1]) * stays_on)))


def test_census_by_hour_is_the_infinite_server_mean():
    # Source: Eick, Massey & Whitt (1993), Mt/G/inf: the expected number in system at t is the
    # sum over admitted patients of P(still in at t); here admissions fixed per weekday, so the
    # census is a sum of independent Bernoulli trials with variance sum p (1 - p); tolerance
    # 4.5 standard errors of the mean over paths at every point.
    paths, days = 600, 14
    per_weekday = np.array([6, 5, 5, 5, 6, 3, 3])
    counts = np.tile(per_weekday[np.arange(days) % 7], (paths, 1))
    ward_model = model(discharges=timing())
    inputs = draw_inputs(ward_model, counts, 21)
    leave = discharge_hours(DischargeTables.build(timing(), 0), inputs.arrival_hours,
                            inputs.stay_days, inputs.clock_uniforms)  # fmt: skip
    path = np.repeat(np.arange(paths), np.diff(inputs.offsets))
    checked = 0
    for day in (2, 5, 6, 9, 13):
        for hour in (0.5, 6.5, 10.25, 14.75, 19.5, 23.5):
            t = 24 * day + hour
            inside = (inputs.arrival_hours <= t) & (leave > t)
            census = np.bincount(path[inside], minlength=paths)
            p = np.array([still_in(ALPHA, BETA, PROFILE, a, day, hour) for a in range(day + 1)])
            n = per_weekday[np.arange(day + 1) % 7]
            se = math.sqrt(np.sum(n * p * (1 - p)) / paths)
            assert abs(census.mean() - n @ p) < 4.5 * se, (day, hour, census.mean(), n @ p)
            checked += 1
    assert checked == 30


@pytest.mark.parametrize("engine", [fast, ward])
def test_midnight_census_of_both_engines_is_the_infinite_server_mean(engine):
    # Source: as above (Eick, Massey & Whitt 1993) at each midnight: in if the discharge day
    # is later than the day (P = S(day - arrival day)); tolerance 4.5 standard errors.
    paths, days = 300 if engine is fast else 60, 14
    per_weekday = np.array([6, 5, 5, 5, 6, 3, 3])
    counts = np.tile(per_weekday[np.arange(days) % 7], (paths, 1))
    ward_model = model(discharges=timing())
    result = engine.simulate_drawn(draw_inputs(ward_model, counts, 8), ward_model, days)
    census = result.census
    for day in range(days):
        p = np.array([survival(ALPHA, BETA, (a % 7), day - a + 1)[-1] for a in range(day + 1)])
        n = per_weekday[np.arange(day + 1) % 7]
        se = math.sqrt(np.sum(n * p * (1 - p)) / paths)
        assert abs(census[:, day].mean() - n @ p) < 4.5 * max(se, 1e-9), day


def test_no_discharge_before_its_bed_and_none_on_day_zero_before_the_bed_time():
    counts = np.random.default_rng(4).poisson(6.0, size=(200, 21))
    inputs = draw_inputs(model(discharges=timing()), counts, 3)
    leave = discharge_hours(DischargeTables.build(timing(), 0), inputs.arrival_hours,
                            inputs.stay_days, inputs.clock_uniforms)  # fmt: skip
    assert np.all(leave >= inputs.arrival_hours)
    # Source: PROFILE (above) has no discharge before 09:00 or after 20:00; a patient leaving
    # outside those hours did so on the admission day after 20:00 (the even rest-of-day rule).
    clock = leave % 24
    outside = (clock < 9) | (clock >= 20)
    same_day = np.floor(leave / 24) == np.floor(inputs.arrival_hours / 24)
    assert np.all(same_day[outside] & (inputs.arrival_hours[outside] % 24 >= 20))


# --- reduction to the continuous model -------------------------------------------------------


def test_flat_calendar_timing_gives_the_census_of_the_continuous_model():
    # Source: with no weekday effect and flat hour profiles, a calendar stay is k + U2 - U1
    # nights for Poisson admissions at a constant rate; with unlimited beds the midnight census
    # is Poisson with mean rate x E[stay] under either model (Mt/G/inf, Eick, Massey & Whitt
    # 1993; here stationary). The continuous model is the empirical distribution of 200,000
    # stays drawn from the calendar one. Day 55 (past the 8-week warm-up's transient), 6,000
    # paths: tolerance 4.5 standard errors for the mean and for P(census >= m) at three m.
    flat = timing(beta=np.zeros(7), profile=np.full((7, 24), 1 / 24))
    tables = DischargeTables.build(flat, 0)
    rng = np.random.default_rng(9)
    bed = rng.uniform(0, 24 * 7, 200_000)
    stays = (discharge_hours(tables, bed, rng.random(bed.size), rng.random(bed.size)) - bed) / 24
    rate, paths, days = 5.0, 6000, 56
    counts = np.random.default_rng(10).poisson(rate, size=(paths, days))
    calendar_model = model(discharges=flat, arrival=FLAT)
    continuous_model = replace(model(arrival=FLAT), stays=Empirical(stays))
    calendar = fast.simulate_drawn(draw_inputs(calendar_model, counts, 1), calendar_model, days)
    continuous = fast.simulate_drawn(
        draw_inputs(continuous_model, counts, 2), continuous_model, days
    )
    mean = rate * stays.mean()
    for result in (calendar, continuous):
        census = result.census[:, days - 1]
        assert abs(census.mean() - mean) < 4.5 * math.sqrt(mean / paths)
        for m in (mean - 5, mean, mean + 5):
            want = stats.poisson.sf(math.ceil(m) - 1, mean)
            se = math.sqrt(want * (1 - want) / paths)
            assert abs(np.mean(census >= math.ceil(m)) - want) < 4.5 * se


# --- the levers on a known process -----------------------------------------------------------


def weekly_no_bed(result) -> np.ndarray:
    """Per path and week: 1 when some patient found no free bed that week."""
    blocked = (result.waited + result.diverted).reshape(result.paths, -1, 7).sum(axis=2)
    return (blocked > 0).astype(float)


@pytest.mark.parametrize("lever", ["seven_day", "earlier"])
def test_levers_lower_the_chance_of_no_free_bed(lever):
    # Source (direction): spreading discharges over seven days (Wong et al., Emerg. Med. J. 27
    # (2010) 593-598) and discharging earlier in the day (Shi et al., Management Science 2016)
    # each lower the waits for a bed. Paired on common random numbers: the mean difference in
    # the weekly chance must be below zero by more than 3 paired standard errors.
    base = timing()
    changed = base.seven_day(1.0) if lever == "seven_day" else base.earlier(4)
    paths, days = 400, 28
    counts = np.random.default_rng(6).poisson(4.6, size=(paths, days))
    elapsed = np.random.default_rng(7).uniform(0, 8, 18)
    before = model(22, "wait", elapsed, base)
    after = replace(before, discharges=changed)
    first = weekly_no_bed(fast.simulate_drawn(draw_inputs(before, counts, 5), before, days))
    second = weekly_no_bed(fast.simulate_drawn(draw_inputs(after, counts, 5), after, days))
    difference = (second - first).mean(axis=1)
    assert difference.mean() < -3 * difference.std(ddof=1) / math.sqrt(paths)


def test_mean_nights_lever_reaches_its_target():
    # Source: definition: the mean day of stay of the discharge is the sum of the survival
    # function over days (here summed over 2,000 days from the hazard written out above).
    changed = timing().with_mean_nights(3.0)
    means = [survival(changed.alpha, BETA, w, 2000).sum() for w in range(7)]
    assert np.mean(means) == pytest.approx(3.0, abs=1e-9)
    assert changed.beta.tolist() == BETA.tolist()


def test_before_noon_lever_reaches_its_share_and_keeps_each_half_shape():
    # Source: definition of the lever (module docstring of discharge_fit): at least the share
    # before 12:00 on every weekday, morning and afternoon hours each scaled together.
    base = timing(profile=np.tile(np.r_[np.zeros(8), np.full(4, 0.05), np.full(12, 0.8 / 12)],
                                  (7, 1)))  # fmt: skip
    changed = base.before_noon(0.4)
    np.testing.assert_allclose(changed.hour_profile[:, :12].sum(axis=1), 0.4)
    np.testing.assert_allclose(changed.hour_profile.sum(axis=1), 1.0)
    np.testing.assert_allclose(changed.hour_profile[:, 8:12], 0.1)
    np.testing.assert_allclose(changed.hour_profile[:, 12:], 0.6 / 12)
    assert base.before_noon(0.1).hour_profile.tolist() == base.hour_profile.tolist()
    afternoon_only = np.tile(np.r_[np.zeros(12), np.full(12, 1 / 12)], (7, 1))
    with pytest.raises(PlannerError, match="no discharge before 12:00"):
        timing(profile=afternoon_only).before_noon(0.3)

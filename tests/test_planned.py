"""Planned admissions in both engines: a worked example written down day by day, the census
against the infinite-server formula, the two engines against each other, common random
numbers with the emergency patients, and the scenario's [planned] keys."""

from __future__ import annotations

import math
from dataclasses import replace
from datetime import date

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from test_bad_input import GOOD, Case, assert_one_line_error, plan, write_case
from test_discharge_times import timing
from wards import FixedStay, drawn_ward

from planner.cli import cli
from planner.simulate import fast, ward
from planner.simulate.model import WardModel
from planner.simulate.planned import PlannedList
from planner.simulate.sampling import draw_inputs
from planner.simulate.settings import WardSettings
from planner.simulate.stays import Lognormal

START = date(2024, 1, 1)  # a Monday (from memory; checked in test_discharge_fit.py)
UNIFORM = np.full(24, 1 / 24)
NONE_IN = np.zeros(0)
ENGINES = [fast, ward]


ONE_AND_A_HALF = FixedStay(1.5)


def planned_ward(beds, when_full, per_weekday=(3, 0, 0, 0, 0, 0, 0), stay=ONE_AND_A_HALF):
    planned = PlannedList(per_weekday, 8.0, stay, when_full)
    return WardModel(START, WardSettings(beds=beds), FixedStay(2.0), NONE_IN, UNIFORM,
                     planned=planned)  # fmt: skip


def simulate(engine, model, arrivals, seed=1):
    return engine.simulate_drawn(draw_inputs(model, arrivals, seed), model, arrivals.shape[1])


@pytest.mark.parametrize("engine", ENGINES)
def test_worked_example_cancel(engine):
    # Worked by hand (common practice for a fixed schedule): 2 beds, three planned patients
    # every Monday at 08:00 staying exactly 1.5 days, nobody else. Each Monday two get beds
    # and one is cancelled; both leave on Tuesday at 20:00.
    result = simulate(engine, planned_ward(2, "cancel"), np.zeros((1, 14), dtype=np.int64))
    assert result.census[0].tolist() == [2, 0, 0, 0, 0, 0, 0] * 2
    assert result.cancelled[0].tolist() == [1, 0, 0, 0, 0, 0, 0] * 2
    assert result.planned_admissions[0].tolist() == [2, 0, 0, 0, 0, 0, 0] * 2
    assert result.admissions[0].tolist() == [2, 0, 0, 0, 0, 0, 0] * 2
    assert result.discharges[0].tolist() == [0, 2, 0, 0, 0, 0, 0] * 2
    assert result.waited.sum() == 0 and result.wait_hours.sum() == 0


@pytest.mark.parametrize("engine", ENGINES)
@pytest.mark.parametrize("policy", ["wait", "divert"])
def test_worked_example_wait(engine, policy):
    # Worked by hand: as above, but the third patient waits (whatever beds.policy says) from
    # Monday 08:00 to Tuesday 20:00 (36 hours), takes the first bed freed and leaves on
    # Thursday at 08:00.
    model = planned_ward(2, "wait")
    model = replace(model, settings=WardSettings(beds=2, policy=policy))
    result = simulate(engine, model, np.zeros((1, 7), dtype=np.int64))
    assert result.census[0].tolist() == [2, 1, 1, 0, 0, 0, 0]
    assert result.planned_admissions[0].tolist() == [2, 1, 0, 0, 0, 0, 0]
    assert result.waited[0].tolist() == [1, 0, 0, 0, 0, 0, 0]
    assert result.queue[0].tolist() == [1, 0, 0, 0, 0, 0, 0]
    assert result.wait_hours[0].tolist() == [36.0, 0, 0, 0, 0, 0, 0]
    assert result.discharges[0].tolist() == [0, 2, 0, 1, 0, 0, 0]
    assert result.cancelled.sum() == 0 and result.diverted.sum() == 0


@pytest.mark.parametrize("engine", ENGINES)
def test_planned_census_is_the_infinite_server_mean(engine):
    # Source: Eick, Massey & Whitt (1993), Mt/G/inf: with unlimited beds the expected census
    # at t is the sum over admitted patients of P(S > t - admission time); here the planned
    # admissions are fixed, so the census is a sum of independent Bernoulli trials (variance
    # sum p (1 - p)); tolerance 4.5 standard errors of the mean over paths, every midnight.
    stays = Lognormal.from_mean_sd(3.0, 2.0)
    per_weekday = (4, 3, 3, 2, 5, 0, 0)
    model = planned_ward(10_000, "cancel", per_weekday, stays)
    paths, days = 400 if engine is fast else 60, 21
    result = simulate(engine, model, np.zeros((paths, days), dtype=np.int64), seed=3)
    hours = model.planned.hours(START, days)
    for day in range(days):
        t = 24.0 * (day + 1)
        before = hours[hours < t]
        p = stays.survival((t - before) / 24.0)
        se = math.sqrt(np.sum(p * (1 - p)) / paths)
        assert abs(result.census[:, day].mean() - p.sum()) < 4.5 * max(se, 1e-9), day


def test_planned_patients_leave_the_emergency_draws_alone():
    # Common random numbers: a planned list adds patients without changing any emergency
    # patient's arrival time or stay.
    counts = np.random.default_rng(2).poisson(4.0, size=(5, 14))
    without = WardModel(START, WardSettings(beds=20), Lognormal.from_mean_sd(4, 3), NONE_IN,
                        UNIFORM)  # fmt: skip
    with_list = replace(without, planned=PlannedList((2, 2, 2, 2, 2, 0, 0), 7.5,
                                                     Lognormal.from_mean_sd(2, 1)))  # fmt: skip
    alone, both = draw_inputs(without, counts, 4), draw_inputs(with_list, counts, 4)
    emergency = both.planned == 0
    np.testing.assert_array_equal(both.arrival_hours[emergency], alone.arrival_hours)
    np.testing.assert_array_equal(both.stay_days[emergency], alone.stay_days)
    assert np.all(np.diff(both.offsets) == np.diff(alone.offsets) + 10 * 2)
    assert np.all(both.arrival_hours[~emergency] % 24 == 7.5)


@settings(max_examples=30, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    rate=st.floats(0.0, 6.0),
    beds=st.integers(1, 12),
    changes=st.lists(
        st.tuples(st.integers(0, 10), st.integers(0, 5), st.integers(-4, 4)), max_size=2
    ),  # fmt: skip
    policy=st.sampled_from(["wait", "divert"]),
    when_full=st.sampled_from(["cancel", "wait"]),
    per_weekday=st.lists(st.integers(0, 4), min_size=7, max_size=7),
    calendar=st.booleans(),
    seed=st.integers(0, 2**32 - 1),
)
def test_engines_agree_with_planned_lists(
    rate, beds, changes, policy, when_full, per_weekday, calendar, seed
):
    elapsed = np.random.default_rng(seed).uniform(0, 6, beds // 2)
    model = WardModel(START, drawn_ward(beds, changes, policy), Lognormal.from_mean_sd(3, 2),
                      elapsed, UNIFORM, timing() if calendar else None,
                      planned=PlannedList(tuple(per_weekday), 9.25, Lognormal.from_mean_sd(2, 1),
                                          when_full))  # fmt: skip
    arrivals = np.random.default_rng(seed).poisson(rate, size=(3, 14))
    inputs = draw_inputs(model, arrivals, seed)
    simpy = ward.simulate_drawn(inputs, model, 14)
    compiled = fast.simulate_drawn(inputs, model, 14)
    pd.testing.assert_frame_equal(compiled.daily, simpy.daily, check_exact=True)
    pd.testing.assert_frame_equal(compiled.shifts, simpy.shifts, check_exact=True)
    # Conservation: on the ward at the start + admitted (cancelled bookings never come) =
    # discharged + in beds at the end + diverted + still waiting.
    came = elapsed.size + compiled.admissions.sum(axis=1)
    left = (compiled.discharges.sum(axis=1) + compiled.census[:, -1]
            + compiled.diverted.sum(axis=1) + compiled.queue[:, -1])  # fmt: skip
    np.testing.assert_array_equal(came, left)
    booked = model.planned.counts(START, 14).sum()
    admitted = compiled.planned_admissions.sum(axis=1) + compiled.cancelled.sum(axis=1)
    assert np.all(admitted <= booked)


# --- the [planned] keys through the command line --------------------------------------------

LIST = "[planned]\nlist = [2, 2, 2, 2, 2, 0, 0]\n"
CASES = [
    Case("planned table without a list", ("planned.list: required",),
         {"ward.csv": GOOD}, plan(tables="[planned]\nwhen_full = 'wait'\n"), "plan.toml"),
    Case("planned mean without sd", ("planned.stay_mean: given without planned.stay_sd",),
         {"ward.csv": GOOD}, plan(tables=LIST + "stay_mean = 2.0\n"), "plan.toml"),
    Case("planned list of six", ("planned.list",),
         {"ward.csv": GOOD}, plan(tables="[planned]\nlist = [1, 1, 1, 1, 1, 1]\n"), "plan.toml"),
    Case("planned time past midnight", ("planned.admission_time",),
         {"ward.csv": GOOD}, plan(tables=LIST + "admission_time = '24:00'\n"), "plan.toml"),
    Case("planned stays unknown", ("planned.stay_mean: needed",),
         {"ward.csv": GOOD}, plan(tables=LIST), "plan.toml"),
    Case("planned without method", ("no admission method", "counted twice"),
         {"episodes.csv": "admitted_at,discharged_at\n2026-01-01 10:00,2026-01-03 12:00\n"},
         plan(history='episodes = "episodes.csv"', tables=LIST + "stay_mean = 2.0\n"
              "stay_sd = 1.0\n"), "episodes.csv"),
]  # fmt: skip


@pytest.mark.parametrize("case", CASES, ids=[case.name for case in CASES])
def test_bad_planned_keys(tmp_path, case):
    given = write_case(tmp_path / "ward", case)
    named = str(tmp_path / "ward" / case.names)
    for argv in (["check", str(given)], ["run", str(given), "--out", str(tmp_path / "out")]):
        result = CliRunner().invoke(cli, argv)
        assert_one_line_error(result, *case.expect)
        assert named in result.output
        assert not (tmp_path / "out").exists()


def test_run_with_a_planned_list_reports_cancellations(tmp_path):
    case = Case("ok", (), {"ward.csv": GOOD},
                plan(tables=LIST + "stay_mean = 2.0\nstay_sd = 1.0\n"))  # fmt: skip
    given = write_case(tmp_path / "ward", case)
    check = CliRunner().invoke(cli, ["check", str(given)])
    assert check.exit_code == 0, check.output
    assert "planned: 2 Mon, 2 Tue, 2 Wed, 2 Thu, 2 Fri at 08:00" in check.output
    out = tmp_path / "out"
    result = CliRunner().invoke(cli, ["run", str(given), "--out", str(out)])
    assert result.exit_code == 0, result.output
    weekly = pd.read_csv(out / "weekly.csv")
    for column in ("expected_planned_admitted", "expected_cancelled", "p_cancellation"):
        assert column in weekly
    # Every booked patient is admitted or cancelled within the week (cancel policy, 10 a week).
    booked = weekly["expected_planned_admitted"] + weekly["expected_cancelled"]
    np.testing.assert_allclose(booked, 10.0)
    assert "Planned admissions" in (out / "report.html").read_text()


# --- single bookings --------------------------------------------------------------------------


def bookings(*rows: tuple[str, float]) -> pd.DataFrame:
    return pd.DataFrame({"at": pd.to_datetime([at for at, _ in rows]),
                         "expected_stay": [stay for _, stay in rows]})  # fmt: skip


@pytest.mark.parametrize("engine", ENGINES)
def test_worked_example_bookings(engine):
    # Worked by hand: 2 beds, no list, three bookings on Monday 1 January 2024 at 09:00
    # (expected stay 1 day), 10:00 (2 days) and 11:00 (none stated: the planned stay, exactly
    # 1.5 days); a booking made before the window (31 December) is ignored. The first two get
    # beds and leave on Tuesday 09:00 and Wednesday 10:00; the third is cancelled.
    planned = PlannedList((0,) * 7, 8.0, FixedStay(1.5), "cancel",
                          bookings(("2024-01-01 10:00", 2.0), ("2024-01-01 09:00", 1.0),
                                   ("2024-01-01 11:00", math.nan),
                                   ("2023-12-31 09:00", 1.0)))  # fmt: skip
    model = WardModel(START, WardSettings(beds=2), FixedStay(2.0), NONE_IN, UNIFORM,
                      planned=planned)  # fmt: skip
    result = simulate(engine, model, np.zeros((1, 4), dtype=np.int64))
    assert result.census[0].tolist() == [2, 1, 0, 0]
    assert result.discharges[0].tolist() == [0, 1, 1, 0]
    assert result.cancelled[0].tolist() == [1, 0, 0, 0]


def test_list_and_bookings_are_merged_in_time():
    planned = PlannedList((1, 0, 0, 0, 0, 0, 0), 8.0, FixedStay(2.0), "cancel",
                          bookings(("2024-01-01 07:00", 4.0), ("2024-01-01 08:00", math.nan),
                                   ("2024-01-20 08:00", 1.0)))  # fmt: skip
    hours, factor = planned.schedule(START, 7)
    assert hours.tolist() == [7.0, 8.0, 8.0]  # the list's 08:00 patient before the booking's
    assert factor.tolist() == [2.0, 1.0, 1.0]


BOOKED = "[planned]\nbookings = 'bookings.csv'\nstay_mean = 2.0\nstay_sd = 1.0\n"
BOOKING_CASES = [
    Case("bookings without time", ("bookings.csv: line 1: missing column(s) time",),
         {"ward.csv": GOOD, "bookings.csv": "date\n2026-05-01\n"}, plan(tables=BOOKED),
         "bookings.csv"),
    Case("booking date", ("line 3: date '01/05/2026' is not a date",),
         {"ward.csv": GOOD, "bookings.csv": "date,time\n2026-05-01,08:00\n01/05/2026,08:00\n"},
         plan(tables=BOOKED), "bookings.csv"),
    Case("booking time", ("line 2: time '8am' is not a time",),
         {"ward.csv": GOOD, "bookings.csv": "date,time\n2026-05-01,8am\n"}, plan(tables=BOOKED),
         "bookings.csv"),
    Case("booking stay", ("line 2: expected_stay '-1' is not a number of days > 0",),
         {"ward.csv": GOOD, "bookings.csv": "date,time,expected_stay\n2026-05-01,08:00,-1\n"},
         plan(tables=BOOKED), "bookings.csv"),
    Case("bookings empty", ("no bookings below the header",),
         {"ward.csv": GOOD, "bookings.csv": "date,time\n"}, plan(tables=BOOKED), "bookings.csv"),
    Case("bookings missing", ("bookings file not found",),
         {"ward.csv": GOOD}, plan(tables=BOOKED), "bookings.csv"),
]  # fmt: skip


@pytest.mark.parametrize("case", BOOKING_CASES, ids=[case.name for case in BOOKING_CASES])
def test_bad_bookings(tmp_path, case):
    test_bad_planned_keys(tmp_path, case)


def test_run_with_bookings(tmp_path):
    rows = "".join(f"2026-05-{day:02d},09:30,3.0\n" for day in range(1, 29))
    case = Case("ok", (), {"ward.csv": GOOD, "bookings.csv": "date,time,expected_stay\n" + rows},
                plan(tables=BOOKED))  # fmt: skip
    given = write_case(tmp_path / "ward", case)
    check = CliRunner().invoke(cli, ["check", str(given)])
    assert check.exit_code == 0, check.output
    assert "28 single bookings" in check.output
    result = CliRunner().invoke(cli, ["run", str(given), "--out", str(tmp_path / "out")])
    assert result.exit_code == 0, result.output
    weekly = pd.read_csv(tmp_path / "out" / "weekly.csv")
    booked = weekly["expected_planned_admitted"] + weekly["expected_cancelled"]
    assert booked.sum() > 0


@settings(max_examples=20, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    beds=st.integers(1, 10),
    rate=st.floats(0.0, 5.0),
    per_weekday=st.lists(st.integers(0, 4), min_size=7, max_size=7),
    policy=st.sampled_from(["wait", "divert"]),
    seed=st.integers(0, 2**32 - 1),
)
def test_more_beds_never_cancel_more(beds, rate, per_weekday, policy, seed):
    # One more bed on the same patients (common random numbers) never cancels a planned
    # patient who had a bed before, path by path and day by day (cumulatively): a planned
    # patient is cancelled only when every bed is taken, and with more beds every patient
    # gets a bed no later, so leaves no later.
    def cancelled(count):
        model = WardModel(START, WardSettings(beds=count, policy=policy),
                          Lognormal.from_mean_sd(3, 2), NONE_IN, UNIFORM,
                          planned=PlannedList(tuple(per_weekday), 9.0, Lognormal.from_mean_sd(2, 1),
                                              "cancel"))  # fmt: skip
        arrivals = np.random.default_rng(seed).poisson(rate, size=(4, 21))
        return np.cumsum(simulate(fast, model, arrivals, seed).cancelled, axis=1)

    assert np.all(cancelled(beds + 1) <= cancelled(beds))

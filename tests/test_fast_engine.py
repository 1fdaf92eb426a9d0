"""The compiled ward engine against the SimPy ward model, path by path.

Both engines read the same random inputs (``planner.simulate.sampling.draw_inputs``) and
apply the same bed rules to them, so their tables must be equal path by path, not merely
close, wherever no two events fall at exactly the same time (continuous stays make that
probability 0). The checks against queueing theory run on both engines in tests/test_ward.py.
"""

from __future__ import annotations

import os
import subprocess
import sys
from datetime import date

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from wards import FixedStay, drawn_ward

from planner.simulate import fast, ward
from planner.simulate.compiled import DISABLE_VARIABLE
from planner.simulate.model import WardModel
from planner.simulate.sampling import draw_inputs
from planner.simulate.settings import BedChange, Shift, StaffingSettings, WardSettings
from planner.simulate.stays import Exponential, Gamma, Lognormal, Weibull
from planner.simulate.survival import KaplanMeierStays

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


def poisson_paths(seed: int, paths: int, days: int, rate: float) -> np.ndarray:
    return np.random.default_rng(seed).poisson(rate, size=(paths, days))


def assert_same(arrivals, model, seed, first_path=0):
    """Both engines give equal tables (values, dtypes, row order) from the same draws."""
    inputs = draw_inputs(model, arrivals, seed, first_path)
    simpy = ward.simulate_drawn(inputs, model, arrivals.shape[1])
    compiled = fast.simulate_drawn(inputs, model, arrivals.shape[1])
    pd.testing.assert_frame_equal(compiled.daily, simpy.daily, check_exact=True)
    pd.testing.assert_frame_equal(compiled.shifts, simpy.shifts, check_exact=True)
    return compiled


@pytest.mark.parametrize("policy", ["wait", "divert"])
@pytest.mark.parametrize(
    ("beds", "changes", "inpatients"),
    [
        (20, (), 0),  # fixed beds, empty at the start
        (20, (), 18),  # patients on the ward at the start
        (12, (), 18),  # more patients than beds: nobody moved, nobody admitted until < 12
        (20, CLOSURES, 18),  # closure on a full ward (nobody moved) and a one-day opening
        (16, ESCALATION, 10),  # escalation beds
    ],
)
def test_same_tables_as_simpy_model(policy, beds, changes, inpatients):
    settings_ = WardSettings(beds=beds, bed_changes=changes, policy=policy)
    arrivals = poisson_paths(2, 30, 35, 4.5)
    model = WardModel(START, settings_, Lognormal.from_mean_sd(5.0, 4.0),
                      np.linspace(0.0, 9.0, inpatients), PEAKED)  # fmt: skip
    result = assert_same(arrivals, model, 2)
    blocked = "waited" if policy == "wait" else "diverted"
    assert result.daily[blocked].sum() > 0  # the bed rules were exercised


@pytest.mark.parametrize(
    "stays",
    [Gamma.from_mean_sd(5, 3), Weibull.from_mean_sd(4, 3), Exponential.from_mean(4.5)],
    ids=["gamma", "weibull", "exponential"],
)
def test_same_tables_for_every_stay_family(stays):
    settings_ = WardSettings(beds=24, staffing=THREE_SHIFTS, bed_changes=ESCALATION)
    model = WardModel(START, settings_, stays, np.linspace(0, 6, 20), UNIFORM)
    result = assert_same(poisson_paths(3, 20, 28, 5.0), model, 3)
    assert (result.shifts["shortfall"] > 0).any()


@pytest.mark.parametrize("policy", ["wait", "divert"])
def test_same_tables_with_recorded_stays(policy):
    # Stays learned from episodes (Kaplan-Meier with some still running, so with a tail).
    rng = np.random.default_rng(6)
    durations = np.round(rng.lognormal(1.4, 0.8, 600), 2)
    observed = rng.random(600) > 0.05
    observed[np.argsort(durations)[-10:]] = False
    settings_ = WardSettings(beds=18, bed_changes=CLOSURES, policy=policy)
    model = WardModel(START, settings_, KaplanMeierStays(durations, observed),
                      np.linspace(0.0, 30.0, 16), PEAKED)  # fmt: skip
    result = assert_same(poisson_paths(9, 25, 30, 4.5), model, 9)
    assert result.daily["waited" if policy == "wait" else "diverted"].sum() > 0


@pytest.mark.parametrize(("early", "late"), [(7.5, 19.5), (7.3, 19.3), (0.0, 12.0)])
def test_same_staffing_tables_for_any_shift_times(early, late):
    # A shift starting at 00:00 shares its boundary with midnight, when beds change.
    staffing = StaffingSettings(
        shifts=(
            Shift("early", early, late, 4.0, (5,) * 7),
            Shift("late", late, early, 7.0, (3,) * 7),
        )
    )
    settings_ = WardSettings(beds=20, staffing=staffing, bed_changes=CLOSURES)
    model = WardModel(START, settings_, Lognormal.from_mean_sd(5, 4), np.linspace(0, 7, 15), PEAKED)
    result = assert_same(poisson_paths(8, 12, 21, 4.5), model, 8)
    assert (result.shifts["shortfall"] > 0).any()


def test_same_result_when_chunked_and_seeded_by_sequence():
    arrivals = poisson_paths(4, 9, 20, 5.0)
    seed = np.random.SeedSequence(77).spawn(2)[1]  # the run passes a spawned child
    model = WardModel(START, WardSettings(beds=15), Weibull.from_mean_sd(4, 3),
                      np.array([1.0, 2.0, 7.0]), UNIFORM)  # fmt: skip
    tail = assert_same(arrivals[5:], model, seed, first_path=5)
    whole = fast.simulate_ward_fast(arrivals, model, seed)
    np.testing.assert_array_equal(whole.daily.iloc[5 * 20 :].to_numpy(), tail.daily.to_numpy())


def test_closing_beds_moves_nobody_in_both_engines():
    # Worked example of the closing-bed rule: 10 beds, 10 patients each with 4.5 days to go,
    # 5 beds close from day 1 to day 9. Nobody is moved and nobody is admitted until the 10
    # leave at 108 h; afterwards the ward holds at most the 5 beds open.
    settings_ = WardSettings(
        beds=10, policy="divert", bed_changes=(BedChange(date(2024, 1, 2), date(2024, 1, 10), -5),)
    )
    model = WardModel(START, settings_, FixedStay(4.5), np.zeros(10), UNIFORM)
    daily = assert_same(np.full((1, 12), 2), model, 1).daily
    np.testing.assert_array_equal(daily["census"][:4], 10)
    np.testing.assert_array_equal(daily["bed_admissions"][:4], 0)
    assert daily["discharges"][4] == 10
    assert (daily["peak_occupancy"][5:10] <= 5).all()


def test_first_come_first_served_worked_example():
    # 1 bed, 1-day stays, 3 arrivals on day 0: the queue holds 2, then 1, then 0 at midnight.
    model = WardModel(START, WardSettings(beds=1), FixedStay(1.0), NONE_IN, UNIFORM)
    daily = assert_same(np.array([[3, 0, 0, 0, 0]]), model, 4).daily
    assert daily["queue"].tolist() == [2, 1, 0, 0, 0]
    assert daily["bed_admissions"].tolist() == [1, 1, 1, 0, 0]
    # Each waits until the previous patient's day is up: 24 h less the gap between arrivals.
    hours = draw_inputs(model, np.array([[3, 0, 0, 0, 0]]), 4).arrival_hours
    expected = (24.0 - (hours[1] - hours[0])) + (48.0 - (hours[2] - hours[0]))
    assert daily["wait_hours"][0] == pytest.approx(expected, abs=1e-9)


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
    model = WardModel(START, drawn_ward(beds, changes, policy), Exponential.from_mean(2.0),
                      np.linspace(0.0, 5.0, inpatients), PEAKED)  # fmt: skip
    assert_same(np.array(counts), model, seed)


def test_without_a_compiler_the_loops_run_as_python_and_auto_uses_simpy():
    # Forced fallback: the same numbers from the plain-Python loop, and "auto" runs SimPy.
    script = (
        "import numpy as np, datetime as d\n"
        "from planner.simulate import engines, fast\n"
        "from planner.simulate.model import WardModel\n"
        "from planner.simulate.settings import WardSettings\n"
        "from planner.simulate.stays import Exponential\n"
        "assert engines.chosen_engine('auto') == 'simpy', 'auto'\n"
        "print(engines.engine_problem('fast'))\n"
        "m = WardModel(d.date(2024, 1, 1), WardSettings(beds=4), Exponential.from_mean(2.0))\n"
        "r = fast.simulate_ward_fast(np.full((3, 9), 3), m, 5)\n"
        "print(r.census.tolist(), r.wait_hours.sum())\n"
    )
    environment = dict(os.environ, **{DISABLE_VARIABLE: "1"})
    out = subprocess.run([sys.executable, "-c", script], env=environment, capture_output=True,
                         text=True, check=True).stdout.splitlines()  # fmt: skip
    assert out[0].startswith("fast engine unavailable, compiling is switched off")
    here = WardModel(START, WardSettings(beds=4), Exponential.from_mean(2.0))
    compiled = fast.simulate_ward_fast(np.full((3, 9), 3), here, 5)
    assert out[1] == f"{compiled.census.tolist()} {compiled.wait_hours.sum()}"


@pytest.mark.parametrize("policy", ["wait", "divert"])
def test_engines_agree_when_a_discharge_falls_at_the_midnight_beds_change(policy):
    # Patients on the ward leave exactly at 00:00 of day 3, when two beds close, with patients
    # waiting: at equal times both engines change the beds first, then discharge.
    closing = BedChange(date(2024, 1, 4), date(2024, 1, 6), -2)
    settings_ = WardSettings(beds=4, policy=policy, bed_changes=(closing,))
    model = WardModel(START, settings_, FixedStay(4.0), np.array([1.0, 1.0, 1.0, 1.0]), UNIFORM)
    arrivals = np.array([[0, 0, 3, 1, 2, 0, 0, 1]])
    result = assert_same(arrivals, model, 5)
    assert result.daily["discharges"][3] == 4

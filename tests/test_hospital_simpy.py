"""The SimPy hospital model: worked examples of the rules written down by hand, both engines
path by path on the same drawn inputs, pooling against Erlang B and conservation of patients.

The engines must agree exactly on every measure where no two events fall at the same time
(continuous stays and arrival hours make such ties probability 0 for emergency patients;
planned patients all arrive at one hour, which both engines take in the joined order of
arrival, after a shift boundary at that hour).

Statistical checks as in ``test_hospital_engine.py``: pooled shares across independent paths
within 4 replicate standard errors (Source: Law, Simulation Modeling and Analysis, ch. 9).
"""

from __future__ import annotations

import math
from dataclasses import replace
from datetime import date

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from test_discharge_times import timing
from test_hospital_engine import check_conservation, pooled_share, small_hospitals, ward

from planner.errors import PlannerError
from planner.hospital import fast, simpy_model
from planner.hospital.model import HospitalModel, Outlying
from planner.hospital.result import OUTLYING
from planner.hospital.sampling import HospitalInputs, draw_hospital
from planner.simulate.model import WardModel
from planner.simulate.planned import WHEN_FULL, PlannedList
from planner.simulate.queueing import erlang_b
from planner.simulate.result import PATH_DAILY
from planner.simulate.settings import BedChange, WardSettings
from planner.simulate.stays import Exponential, Lognormal

START = date(2024, 1, 1)
SETTLED = settings(max_examples=80, deadline=None, suppress_health_check=[HealthCheck.too_slow])
ENGINES = [fast, simpy_model]


def by_hand(patients, inpatients) -> HospitalInputs:
    """One path's inputs written out: ``patients`` (hour, home ward, stay days) in order of
    hour, ``inpatients`` (ward, remaining days) ward after ward."""
    hours, homes, stays = (np.array(column, dtype=float) for column in zip(*patients, strict=True))
    wards, remaining = zip(*inpatients, strict=True)
    return HospitalInputs(0, np.array([0, len(patients)]), hours, homes.astype(np.int64), stays,
                          np.zeros(0), np.zeros(0, np.uint8), np.array([remaining], dtype=float),
                          np.array(wards, dtype=np.int64))  # fmt: skip


def a_ward(beds: int, policy: str = "wait", inpatients: int = 1, changes=()) -> WardModel:
    settings_ = WardSettings(beds=beds, policy=policy, bed_changes=tuple(changes))
    return WardModel(START, settings_, Exponential.from_mean(2.0), np.zeros(inpatients))


def from_day(day: int, change: int) -> BedChange:
    """``change`` beds from 00:00 of ``day`` to the end of the examples' window."""
    return BedChange(date(2024, 1, 1 + day), date(2024, 1, 10), change)


@pytest.mark.parametrize("engine", ENGINES)
def test_worked_example_longest_waiting_emergency_patient_takes_an_outlying_bed(engine):
    # Worked by hand. Wards A, B, C of one bed each, every bed taken at the start; A and B
    # list C. B's patient arrives at 02:00 and A's at 03:00: both wait. C's bed frees at
    # 21:00 and goes to the one who has waited longest (B's, though A is listed first), who
    # stays a day; at 45:00 that bed goes to A's patient, outlying to the end (48:00).
    hospital = HospitalModel(("A", "B", "C"), (a_ward(1), a_ward(1), a_ward(1)),
                             Outlying(((2,), (2,), ())))  # fmt: skip
    inputs = by_hand([(2.0, 1, 1.0), (3.0, 0, 1.0)], [(0, 10.0), (1, 10.0), (2, 0.875)])
    result = engine.simulate_drawn(inputs, hospital, 2)
    a, b, c = result.wards
    assert a.wait_hours[0].tolist() == [42.0, 0.0] and b.wait_hours[0].tolist() == [19.0, 0.0]
    assert a.queue[0].tolist() == [1, 0] and b.queue[0].tolist() == [0, 0]
    assert c.bed_admissions[0].tolist() == [1, 1] and c.discharges[0].tolist() == [1, 1]
    assert result.outliers_placed[:, 0].tolist() == [[0, 1], [1, 0], [0, 0]]
    assert result.outliers_hosted[2, 0].tolist() == [1, 1]
    assert result.outliers_on_ward[2, 0].tolist() == [1, 1]
    assert result.outlier_hours[:, 0].tolist() == [[0.0, 3.0], [24.0, 0.0], [0.0, 0.0]]
    assert result.placed_between[0].tolist() == [[0, 0, 1], [0, 0, 1], [0, 0, 0]]


@pytest.mark.parametrize("engine", ENGINES)
@pytest.mark.parametrize(
    ("limit", "hours"), [(12.0, [47.0, 6.0]), (math.inf, [35.0, 18.0])]
)  # fmt: skip
def test_worked_example_an_outlier_moves_home_within_the_limit(engine, limit, hours):
    # Worked by hand. A (1 bed, taken until 36:00) lists B (3 beds, empty); A's patients
    # arrive at 01:00 and 30:00 and go to B. At 36:00 A's bed frees: with a 12-hour limit the
    # first (placed 35 h before) may not move, so the second (6 h) moves home; with no
    # limit the first, outlying longest, moves. The other outlies to the end (48:00).
    # Where the rules read "the patient outlying longest, if placed less than the limit
    # ago", the engines take the longest outlying of those placed within the limit.
    hospital = HospitalModel(("A", "B"), (a_ward(1), a_ward(3, inpatients=0)),
                             Outlying(((1,), ()), True, limit))  # fmt: skip
    inputs = by_hand([(1.0, 0, 10.0), (30.0, 0, 10.0)], [(0, 1.5)])
    result = engine.simulate_drawn(inputs, hospital, 2)
    assert result.moved_back[0, 0].tolist() == [0, 1]
    assert result.moved_out[1, 0].tolist() == [0, 1]
    assert result.outlier_hours[0, 0].tolist() == hours
    assert result.wards[0].census[0].tolist() == [1, 1]
    assert result.wards[0].discharges[0].tolist() == [0, 1]
    assert result.wards[1].census[0].tolist() == [1, 1]
    assert result.wards[0].bed_admissions[0].tolist() == [0, 0]


@pytest.mark.parametrize("engine", ENGINES)
def test_worked_example_beds_close_then_free_within_one_instant(engine):
    # Worked by hand. H has 3 beds on day 0, 2 from day 1 (policy wait); A has 1 bed, 3 from
    # day 1, and lists H. H's patient on the ward and A's two outliers (01:00, 02:00) fill H;
    # H's own patient arriving at 05:00 waits. At 00:00 A's two new beds call its outliers
    # home: the first bed they leave on H closes (3 patients, 2 beds), the second goes to
    # H's waiting patient (19 hours waited).
    hospital = HospitalModel(
        ("A", "H"),
        (a_ward(3, changes=[from_day(0, -2), from_day(1, 2)]),
         a_ward(3, changes=[from_day(1, -1)])),
        Outlying(((1,), ()), True),
    )  # fmt: skip
    inputs = by_hand([(1.0, 0, 9.0), (2.0, 0, 9.0), (5.0, 1, 9.0)], [(0, 9.0), (1, 9.0)])
    result = engine.simulate_drawn(inputs, hospital, 2)
    a, h = result.wards
    assert a.census[0].tolist() == [1, 3] and h.census[0].tolist() == [3, 2]
    assert result.moved_back[0, 0].tolist() == [0, 2]
    assert result.moved_out[1, 0].tolist() == [0, 2]
    assert h.wait_hours[0].tolist() == [19.0, 0.0] and h.queue[0].tolist() == [1, 0]
    assert h.bed_admissions[0].tolist() == [2, 1]
    assert result.outlier_hours[0, 0].tolist() == [45.0, 0.0]


@pytest.mark.parametrize("engine", ENGINES)
def test_an_outlier_moving_home_at_midnight_counts_in_the_peak(engine):
    # Worked by hand. A has 1 bed on day 0 and 2 from day 1, its patient on the ward stays to
    # the end; A's patient arriving at 05:00 outlies on B. At 00:00 of day 1 A's second bed
    # opens and the outlier moves home: A holds 2 patients all day 1, so its peak that day is
    # 2, as is the night shift's (19:00 on day 0 to 07:00): a peak is never below the
    # census at 24:00.
    hospital = HospitalModel(("A", "B"), (a_ward(2, changes=[from_day(0, -1), from_day(1, 1)]),
                                          a_ward(2, inpatients=0)),
                             Outlying(((1,), ()), True))  # fmt: skip
    result = engine.simulate_drawn(by_hand([(5.0, 0, 5.0)], [(0, 10.0)]), hospital, 3)
    a = result.wards[0]
    assert a.census[0].tolist() == [1, 2, 2]
    assert result.moved_back[0, 0].tolist() == [0, 1, 0]
    assert a.shift_peak_occupancy[0].tolist() == [[1, 2], [2, 2], [2, 2]]
    assert a.peak_occupancy[0].tolist() == [1, 2, 2]


def assert_engines_agree(compiled, simpy) -> None:
    """Every measure equal, exactly."""
    for w, (mine, theirs) in enumerate(zip(simpy.wards, compiled.wards, strict=True)):
        for name in (*PATH_DAILY, "shift_peak_occupancy", "nurses_required", "shortfall"):
            assert np.array_equal(getattr(mine, name), getattr(theirs, name)), (w, name)
        # A day's peak is at least the census at its start and at its end.
        peak = mine.peak_occupancy
        assert np.all(peak >= mine.census) and np.all(peak[:, 1:] >= mine.census[:, :-1])
    for name in (*OUTLYING, "outlier_hours", "placed_between"):
        assert np.array_equal(getattr(simpy, name), getattr(compiled, name)), name


def both_engines(hospital: HospitalModel, seed: int, days: int = 12):
    """Both engines on the same drawn inputs; each ward's emergency and planned patients
    booked per day (what ``check_conservation`` counts as arrivals)."""
    rng = np.random.default_rng(seed)
    arrivals = [rng.poisson(rng.uniform(0.5, 5.0), size=(6, days)) for _ in hospital.wards]
    inputs = draw_hospital(hospital, arrivals, seed)
    compiled = fast.simulate_drawn(inputs, hospital, days)
    simpy = simpy_model.simulate_drawn(inputs, hospital, days)
    booked = [counts + (0 if m.planned is None else m.planned.counts(START, days))
              for counts, m in zip(arrivals, hospital.wards, strict=True)]  # fmt: skip
    return compiled, simpy, booked


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(hospital=small_hospitals(), seed=st.integers(0, 2**32 - 1))
def test_engines_agree_on_small_hospitals(hospital, seed):
    compiled, simpy, arrivals = both_engines(hospital, seed)
    assert_engines_agree(compiled, simpy)
    check_conservation(simpy, hospital, arrivals)


@st.composite
def planned_hospitals(draw):
    """Small hospitals, some wards with a planned list at 07:00 (a shift starts then)."""
    hospital = draw(small_hospitals())
    wards = []
    for model in hospital.wards:
        if draw(st.booleans()):
            per_weekday = tuple(draw(st.lists(st.integers(0, 3), min_size=7, max_size=7)))
            planned = PlannedList(per_weekday, 7.0, Lognormal.from_mean_sd(2.0, 1.0),
                                  draw(st.sampled_from(WHEN_FULL)))  # fmt: skip
            model = replace(model, planned=planned)
        wards.append(model)
    return hospital.with_wards(tuple(wards))


@SETTLED
@given(hospital=planned_hospitals(), seed=st.integers(0, 2**32 - 1))
def test_engines_agree_with_planned_lists(hospital, seed):
    compiled, simpy, booked = both_engines(hospital, seed)
    assert_engines_agree(compiled, simpy)
    check_conservation(simpy, hospital, booked)
    for w, model in enumerate(hospital.wards):  # a booked patient is admitted at most once
        if model.planned is not None:
            taken = simpy.wards[w].planned_admissions + simpy.wards[w].cancelled
            assert np.all(taken.sum(axis=1) <= model.planned.counts(START, 12).sum())


@st.composite
def calendar_hospitals(draw):
    """Small hospitals, some wards with calendar discharges (two known timings)."""
    hospital = draw(small_hospitals())
    timings = (None, timing(), timing(beta=np.zeros(7)))
    return hospital.with_wards(tuple(replace(model, discharges=draw(st.sampled_from(timings)))
                                     for model in hospital.wards))  # fmt: skip


@SETTLED
@given(hospital=calendar_hospitals(), seed=st.integers(0, 2**32 - 1))
def test_engines_agree_with_calendar_discharges(hospital, seed):
    compiled, simpy, arrivals = both_engines(hospital, seed)
    assert_engines_agree(compiled, simpy)
    check_conservation(simpy, hospital, arrivals)


@pytest.mark.parametrize(
    ("beds", "rate", "mean", "paths"),
    [(4, 1.5, 2.0, 80), (8, 3.0, 2.0, 50),
     pytest.param(4, 1.5, 2.0, 300, marks=pytest.mark.slow),
     pytest.param(8, 3.0, 2.0, 300, marks=pytest.mark.slow)],
)  # fmt: skip
def test_pooling_by_outlying_is_erlang_b_on_the_simpy_model(beds, rate, mean, paths):
    # As test_hospital_engine.py's check of the fast engine. Two identical wards of c beds,
    # each offered a = rate x mean erlangs, divert when no bed: with full mutual outlying
    # the share diverted out of the hospital is B(2c, 2a); with none, B(c, a) on each.
    # Source: Erlang B (Erlang 1917); pooling of beds, de Bruin et al., Health Care Manag.
    # Sci. 13 (2010) 1-16 (pooled wards as one loss system).
    stays = Lognormal.from_mean_sd(mean, mean)  # insensitivity: only the mean matters
    models = (ward(beds, stays=stays), ward(beds, stays=stays))
    rng = np.random.default_rng(22)
    arrivals = [rng.poisson(rate, size=(paths, 120)) for _ in range(2)]
    for outlying, expected in (
        (Outlying(((1,), (0,))), erlang_b(2 * beds, 2 * rate * mean)),
        (Outlying(((), ())), erlang_b(beds, rate * mean)),
    ):
        hospital = HospitalModel(("A", "B"), models, outlying)
        share, se = pooled_share(simpy_model.simulate_hospital(arrivals, hospital, 5), "diverted",
                                 warmup=20)  # fmt: skip
        assert abs(share - expected) < 4 * se, (share, se, expected)
        assert se < 0.15 * expected  # the check has power


@settings(max_examples=20, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(hospital=small_hospitals(), seed=st.integers(0, 2**32 - 1))
def test_simulate_hospital_draws_paths_as_the_fast_engine(hospital, seed):
    # The same seed gives the same inputs, path by path, in chunks or not: the SimPy run of
    # paths 3-5 on their own is rows 3-5 of the whole run and agrees with the fast engine's.
    rng = np.random.default_rng(seed)
    arrivals = [rng.poisson(rng.uniform(0.5, 4.0), size=(6, 10)) for _ in hospital.wards]
    whole = simpy_model.simulate_hospital(arrivals, hospital, seed)
    check_conservation(whole, hospital, arrivals)
    part = simpy_model.simulate_hospital([a[3:] for a in arrivals], hospital, seed, first_path=3)
    compiled = fast.simulate_hospital_fast([a[3:] for a in arrivals], hospital, seed, first_path=3)
    assert_engines_agree(compiled, part)
    assert part.wards[0].first_path == 3
    for name in (*OUTLYING, "outlier_hours"):  # ward first, then paths
        assert np.array_equal(getattr(whole, name)[:, 3:], getattr(part, name)), name
    assert np.array_equal(whole.placed_between[3:], part.placed_between)
    for w in range(len(hospital.wards)):
        for name in PATH_DAILY:
            assert np.array_equal(getattr(whole.wards[w], name)[3:], getattr(part.wards[w], name))


def test_simulate_hospital_refuses_bad_arrivals():
    hospital = HospitalModel(("A", "B"), (ward(2), ward(2)))
    with pytest.raises(PlannerError, match="whole numbers"):
        simpy_model.simulate_hospital([np.full((2, 3), 1.5), np.ones((2, 3))], hospital, 1)

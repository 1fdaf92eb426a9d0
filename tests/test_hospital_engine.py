"""The hospital engine: one ward alone is today's ward, pooling by outlying against Erlang B,
and conservation of patients across wards.

Statistical checks compare pooled shares across independent paths with the published formula,
within 4 replicate standard errors (ratio estimator; Source: Law, Simulation Modeling and
Analysis, ch. 9: across-replicate SEs, 3-4 SE tolerance).
"""

from __future__ import annotations

from dataclasses import replace
from datetime import date

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from wards import drawn_ward

from planner.errors import PlannerError
from planner.hospital.fast import simulate_hospital_fast
from planner.hospital.model import HospitalModel, Outlying
from planner.hospital.sampling import ward_seed
from planner.simulate.fast import simulate_ward_fast
from planner.simulate.model import WardModel
from planner.simulate.queueing import erlang_b
from planner.simulate.result import PATH_DAILY, PATH_SHIFTS
from planner.simulate.settings import WardSettings
from planner.simulate.stays import Exponential, Lognormal

START = date(2024, 1, 1)
UNIFORM = np.full(24, 1 / 24)  # Poisson daily counts, uniform hours: a Poisson process
NONE_IN = np.zeros(0)


def ward(beds: int, policy: str = "divert", stays=None, inpatients=NONE_IN) -> WardModel:
    stays = stays or Exponential.from_mean(2.0)
    return WardModel(START, WardSettings(beds=beds, policy=policy), stays, inpatients, UNIFORM)


def pooled_share(result, column: str, warmup: int) -> tuple[float, float]:
    """Share of the hospital's arrivals after the warm-up that ``column`` counts (summed over
    the wards), pooled over paths, and its standard error across the independent paths
    (ratio estimator: sd of b_i - R a_i over sqrt(n), over the mean arrivals)."""
    counted = sum(getattr(w, column)[:, warmup:].sum(axis=1) for w in result.wards)
    arrived = sum(w.admissions[:, warmup:].sum(axis=1) for w in result.wards)
    share = counted.sum() / arrived.sum()
    residual = counted - share * arrived
    return float(share), float(residual.std(ddof=1) / np.sqrt(arrived.size) / arrived.mean())


def test_a_ward_without_links_is_the_ward_on_its_own():
    # The demo-like set-up of three wards with calendar-free stays, inpatients and waiting:
    # each unlinked ward's every measure equals the one-ward engine's, given the same seed.
    rng = np.random.default_rng(5)
    models = (
        ward(8, "wait", Lognormal.from_mean_sd(3.0, 2.0), np.array([0.5, 2.0, 4.0])),
        ward(5, "divert", Exponential.from_mean(1.5), np.array([1.0])),
        ward(6, "wait", Lognormal.from_mean_sd(2.0, 3.0)),
    )
    arrivals = [rng.poisson(rate, size=(40, 30)) for rate in (2.5, 3.0, 3.2)]
    hospital = HospitalModel(("A", "B", "C"), models)
    result = simulate_hospital_fast(arrivals, hospital, 99)
    for w, model in enumerate(models):
        alone = simulate_ward_fast(arrivals[w], model, ward_seed(99, w))
        for name in (*PATH_DAILY, *PATH_SHIFTS):
            assert np.array_equal(getattr(alone, name), getattr(result.wards[w], name)), name
    assert result.outliers_placed.sum() == 0 and result.placed_between.sum() == 0


def test_an_unlinked_ward_keeps_its_numbers_when_others_outlie():
    # Wards 0 and 1 outlie to each other; ward 2 has no links: its numbers are its own.
    rng = np.random.default_rng(6)
    models = (ward(4), ward(4), ward(5, "wait"))
    arrivals = [rng.poisson(3.0, size=(30, 20)) for _ in range(3)]
    linked = HospitalModel(("A", "B", "C"), models, Outlying(((1,), (0,), ())))
    result = simulate_hospital_fast(arrivals, linked, 3)
    alone = simulate_ward_fast(arrivals[2], models[2], ward_seed(3, 2))
    assert np.array_equal(alone.census, result.wards[2].census)
    assert np.array_equal(alone.wait_hours, result.wards[2].wait_hours)
    assert result.outliers_placed[:2].sum() > 0


@pytest.mark.parametrize(("beds", "rate", "mean"), [(4, 1.5, 2.0), (8, 3.0, 2.0)])
def test_pooling_by_outlying_is_erlang_b_of_the_pooled_ward(beds, rate, mean):
    # Two identical wards of c beds, each offered a = rate x mean erlangs (Poisson arrivals,
    # stays of that mean), divert when no bed: with full mutual outlying the share diverted
    # out of the hospital is B(2c, 2a); with none, B(c, a) on each.
    # Source: Erlang B (Erlang 1917); pooling of beds, de Bruin et al., Health Care Manag.
    # Sci. 13 (2010) 1-16 (pooled wards as one loss system).
    stays = Lognormal.from_mean_sd(mean, mean)  # insensitivity: only the mean matters
    models = (ward(beds, stays=stays), ward(beds, stays=stays))
    rng = np.random.default_rng(21)
    arrivals = [rng.poisson(rate, size=(300, 120)) for _ in range(2)]
    for outlying, expected in (
        (Outlying(((1,), (0,))), erlang_b(2 * beds, 2 * rate * mean)),
        (Outlying(((), ())), erlang_b(beds, rate * mean)),
    ):
        result = simulate_hospital_fast(arrivals, HospitalModel(("A", "B"), models, outlying), 4)
        share, se = pooled_share(result, "diverted", warmup=20)
        assert abs(share - expected) < 4 * se, (share, se, expected)
        assert se < 0.15 * expected  # the check has power
    assert erlang_b(2 * beds, 2 * rate * mean) < 0.8 * erlang_b(beds, rate * mean)


def check_conservation(result, hospital: HospitalModel, arrivals) -> None:
    """Every admission is, at every 24:00, in exactly one ward's bed, waiting, diverted or
    discharged; beds hold no more than beds open allow (beyond closures)."""
    start = np.array([m.inpatients_elapsed.size for m in hospital.wards])
    for w, ward_result in enumerate(result.wards):
        change = (ward_result.bed_admissions - ward_result.discharges
                  + result.moved_back[w] - result.moved_out[w])  # fmt: skip
        assert np.array_equal(ward_result.census, start[w] + np.cumsum(change, axis=1))
        assert np.all(result.outliers_on_ward[w] <= ward_result.census)
        most = max(int(ward_result.beds_open.max()), int(start[w]))
        assert np.all(ward_result.peak_occupancy <= most)
        came = ward_result.admissions.sum(axis=1)
        assert np.array_equal(came, np.asarray(arrivals[w]).sum(axis=1)
                              - ward_result.cancelled.sum(axis=1))  # fmt: skip
    total_in = start.sum() + sum(w.admissions.sum(axis=1) for w in result.wards)
    total_out = sum(
        w.discharges.sum(axis=1) + w.census[:, -1] + w.diverted.sum(axis=1) + w.queue[:, -1]
        for w in result.wards
    )
    assert np.array_equal(total_in, total_out)
    hosted = result.outliers_hosted.sum(axis=(0, 2))
    assert np.array_equal(result.outliers_placed.sum(axis=(0, 2)), hosted)
    assert np.array_equal(result.placed_between.sum(axis=(1, 2)), hosted)
    assert np.all(result.moved_back.sum(axis=(0, 2)) == result.moved_out.sum(axis=(0, 2)))
    assert np.all(result.outlier_hours >= 0)


@st.composite
def small_hospitals(draw):
    wards = draw(st.integers(2, 4))
    models, hosts = [], []
    for w in range(wards):
        changes = draw(st.lists(st.tuples(st.integers(0, 8), st.integers(0, 5),
                                          st.integers(-4, 4)), max_size=2))  # fmt: skip
        policy = draw(st.sampled_from(["wait", "divert"]))
        settings_ = drawn_ward(draw(st.integers(1, 5)), changes, policy)
        inpatients = np.array(draw(st.lists(st.floats(0, 5), max_size=3)))
        stays = Exponential.from_mean(draw(st.floats(0.3, 3.0)))
        models.append(WardModel(START, settings_, stays, inpatients, UNIFORM))
        others = [v for v in range(wards) if v != w]
        hosts.append(tuple(draw(st.permutations(others))[: draw(st.integers(0, len(others)))]))
    move_back = draw(st.booleans())
    limit = draw(st.sampled_from([np.inf, 12.0, 48.0]))
    return HospitalModel(tuple("ABCD"[:wards]), tuple(models),
                         Outlying(tuple(hosts), move_back, limit))  # fmt: skip


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(hospital=small_hospitals(), seed=st.integers(0, 2**32 - 1))
def test_patients_are_conserved_across_wards(hospital, seed):
    rng = np.random.default_rng(seed)
    arrivals = [rng.poisson(rng.uniform(0.5, 5.0), size=(6, 12)) for _ in hospital.wards]
    result = simulate_hospital_fast(arrivals, hospital, seed)
    check_conservation(result, hospital, arrivals)


def test_outliers_move_home_when_a_home_bed_frees():
    # With moving back, outliers placed go home as home beds free; without, none do.
    rng = np.random.default_rng(8)
    models = (ward(3, "wait"), ward(10, "wait"))
    arrivals = [rng.poisson(3.0, size=(50, 30)), rng.poisson(1.0, size=(50, 30))]
    stay = HospitalModel(("A", "B"), models, Outlying(((1,), ())))
    stay_put = simulate_hospital_fast(arrivals, stay, 2)
    home = simulate_hospital_fast(arrivals, replace(stay, outlying=Outlying(((1,), ()), True)), 2)
    assert stay_put.moved_back.sum() == 0 and home.moved_back.sum() > 0
    assert home.moved_back[0].sum() == home.moved_out[1].sum()
    assert home.outlier_hours.sum() < stay_put.outlier_hours.sum()


def test_hospital_rules_are_checked():
    with pytest.raises(PlannerError, match="lists an unknown ward or itself"):
        Outlying(((0,), ()))
    with pytest.raises(PlannerError, match="same name"):
        HospitalModel(("A", "A"), (ward(2), ward(2)))
    with pytest.raises(PlannerError, match="start on different days"):
        HospitalModel(("A", "B"), (ward(2), replace(ward(2), start=date(2024, 2, 1))))


def linked_hospital() -> tuple[HospitalModel, list[np.ndarray]]:
    rng = np.random.default_rng(12)
    models = (ward(4, "wait"), ward(3, "divert"), ward(5, "wait", inpatients=np.array([1.0])))
    outlying = Outlying(((1, 2), (0,), (0,)), True, 24.0)
    arrivals = [rng.poisson(2.5, size=(37, 15)) for _ in models]
    return HospitalModel(("A", "B", "C"), models, outlying), arrivals


def same(one, other) -> bool:
    arrays = ("outliers_placed", "moved_back", "outlier_hours", "placed_between")
    return all(np.array_equal(getattr(one, name), getattr(other, name)) for name in arrays) and all(
        np.array_equal(getattr(a, name), getattr(b, name))
        for a, b in zip(one.wards, other.wards, strict=True)
        for name in (*PATH_DAILY, *PATH_SHIFTS)
    )


def test_results_do_not_depend_on_jobs_or_chunks(monkeypatch):
    from planner.hospital import fast
    from planner.hospital.engines import simulate
    from planner.simulate.model import RunOptions

    model, arrivals = linked_hospital()
    whole = simulate_hospital_fast(arrivals, model, 5)
    assert whole.outliers_placed.sum() > 0 and whole.moved_back.sum() > 0
    for jobs in (1, 2, 3):
        assert same(whole, simulate(arrivals, model, 5, RunOptions(jobs=jobs)))
    first = simulate_hospital_fast([a[:20] for a in arrivals], model, 5)
    rest = simulate_hospital_fast([a[20:] for a in arrivals], model, 5, first_path=20)
    halves = [first, rest]
    assert same(whole, type(whole).concat(halves))
    monkeypatch.setattr(fast, "BLOCK_PATIENTS", 200)  # blocks of a few paths, filled in
    assert same(whole, simulate_hospital_fast(arrivals, model, 5))

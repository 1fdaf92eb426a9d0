"""Ward simulation against queueing theory, bookkeeping identities and the bed rules.

Statistical checks compare means across independent paths (replicates) with the published
formula, within 4 replicate standard errors (Source: Morris, White & Crowther, Stat. Med. 38
(2019); Law, Simulation Modeling and Analysis, ch. 9: across-replicate SEs, 3-4 SE tolerance).
"""

from __future__ import annotations

from datetime import date

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from wards import drawn_ward

from planner.errors import PlannerError
from planner.simulate.model import WardModel
from planner.simulate.queueing import (
    erlang_b,
    erlang_c,
    infinite_server_mean,
    inpatients_remaining_mean,
)
from planner.simulate.result import DAILY_COLUMNS
from planner.simulate.settings import BedChange, WardSettings
from planner.simulate.stays import Exponential, Gamma, Lognormal, Weibull
from planner.simulate.ward import path_seeds, simulate_ward
from planner.summaries.daily import summarise_daily, summarise_shifts

START = date(2024, 1, 1)
UNIFORM = np.full(24, 1 / 24)  # uniform hour profile: Poisson daily counts give a Poisson process
NONE_IN = np.zeros(0)


class FixedStay:
    """Every stay lasts exactly ``days``; remaining stay = days - elapsed (at least 0)."""

    def __init__(self, days: float):
        self.mean = days

    def sample(self, rng, size):
        return np.full(size, self.mean)

    def sample_remaining(self, rng, elapsed):
        return np.maximum(self.mean - np.asarray(elapsed, dtype=float), 0.0)


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
    """Share of arrivals after the warm-up that waited or were diverted: mean and SE."""
    after = slice(warmup, None)
    shares = per_path(result, column, after).sum(1) / per_path(result, "admissions", after).sum(1)
    return replicate_mean_se(shares)


# --- Erlang loss (divert policy) and insensitivity ---------------------------------------------


def check_erlang_b(beds, rate, stays, paths, days, seed):
    arrivals = poisson_paths(seed, paths, np.full(days, rate))
    ward = WardSettings(beds=beds, policy="divert")
    result = simulate_ward(arrivals, WardModel(START, ward, stays, NONE_IN, UNIFORM), seed)
    mean, se = blocked_share(result, "diverted", warmup=30)
    # Source: Erlang B, B(c, lambda E[S]) (Erlang 1917); insensitivity to the stay distribution
    # beyond its mean (Sevastyanov 1957).
    expected = erlang_b(beds, rate * stays.mean)
    assert abs(mean - expected) < 4 * se, (mean, se, expected)
    assert se < 0.2 * expected  # the check has power


@pytest.mark.parametrize(
    ("beds", "rate", "stays"),
    [
        (10, 2.0, Lognormal.from_mean_sd(4.0, 3.0)),  # a = 8
        (5, 1.0, Lognormal.from_mean_sd(3.0, 4.0)),  # a = 3
        (10, 2.0, Gamma.from_mean_sd(4.0, 6.0)),  # same mean, other shape
        (5, 1.0, Weibull.from_mean_sd(3.0, 1.5)),
    ],
)
def test_divert_share_is_erlang_b(beds, rate, stays):
    check_erlang_b(beds, rate, stays, paths=150, days=150, seed=11)


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
def test_divert_share_is_erlang_b_many_paths(beds, rate, stays):
    check_erlang_b(beds, rate, stays, paths=1000, days=300, seed=12)


# --- Erlang delay (wait policy), Little's law ----------------------------------------------------


@pytest.mark.parametrize(
    ("beds", "rate", "mean", "paths"), [(5, 1.0, 2.5, 150), (3, 1.0, 2.0, 150)]
)
def test_wait_share_is_erlang_c(beds, rate, mean, paths):
    arrivals = poisson_paths(3, paths, np.full(150, rate))
    ward = WardSettings(beds=beds, policy="wait")
    result = simulate_ward(
        arrivals, WardModel(START, ward, Exponential.from_mean(mean), NONE_IN, UNIFORM), 3
    )
    share, se = blocked_share(result, "waited", warmup=30)
    # Source: Erlang C, M/M/c probability of waiting (REFERENCES.md).
    expected = erlang_c(beds, rate * mean)
    assert abs(share - expected) < 4 * se, (share, se, expected)


def test_littles_law_in_wait_mode():
    rate, days, warmup, tail = 1.6, 200, 30, 20
    stays = Lognormal.from_mean_sd(2.5, 2.0)
    arrivals = poisson_paths(5, 200, np.full(days, rate))
    result = simulate_ward(
        arrivals, WardModel(START, WardSettings(beds=5), stays, NONE_IN, UNIFORM), 5
    )
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


@pytest.mark.parametrize("stays", [Lognormal.from_mean_sd(6.0, 5.0), Gamma.from_mean_sd(6.0, 3.0)])
def test_current_inpatients_leave_by_conditional_survival(stays):
    elapsed = np.array([0.0, 0.5, 1.0, 2.0, 3.0, 4.0, 6.0, 8.0, 12.0, 20.0] * 3)
    arrivals = np.zeros((600, 20), dtype=int)
    result = simulate_ward(
        arrivals, WardModel(START, WardSettings(beds=40), stays, elapsed, UNIFORM), 8
    )
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


@pytest.mark.parametrize("policy", ["wait", "divert"])
def test_conservation_and_daily_balance(policy):
    elapsed = np.linspace(0, 9, 18)
    arrivals = poisson_paths(2, 40, np.full(30, 4.5))
    ward = WardSettings(beds=20, bed_changes=CLOSURES, policy=policy)
    result = simulate_ward(
        arrivals, WardModel(START, ward, Lognormal.from_mean_sd(5, 4), elapsed, UNIFORM), 2
    )
    assert_books_balance(result, inpatients=elapsed.size)
    never = "diverted" if policy == "wait" else "waited"
    assert (result.daily[never] == 0).all()
    np.testing.assert_array_equal(
        result.daily["beds_open"].to_numpy()[:14], [23] + [20] * 3 + [14] * 8 + [20] * 2
    )


def test_same_seed_same_result_and_chunks_match():
    arrivals = poisson_paths(4, 10, np.full(20, 5.0))
    ward = WardSettings(beds=15)
    stays = Lognormal.from_mean_sd(5, 4)
    elapsed = np.array([1.0, 2.0, 7.0])
    whole = simulate_ward(arrivals, WardModel(START, ward, stays, elapsed, UNIFORM), 99)
    again = simulate_ward(arrivals, WardModel(START, ward, stays, elapsed, UNIFORM), 99)
    head = simulate_ward(arrivals[:4], WardModel(START, ward, stays, elapsed, UNIFORM), 99)
    tail = simulate_ward(
        arrivals[4:], WardModel(START, ward, stays, elapsed, UNIFORM), 99, first_path=4
    )
    assert whole.daily.equals(again.daily) and whole.shifts.equals(again.shifts)
    assert whole.daily.iloc[: 4 * 20].equals(head.daily)
    np.testing.assert_array_equal(whole.daily.iloc[4 * 20 :].to_numpy(), tail.daily.to_numpy())
    other = simulate_ward(arrivals, WardModel(START, ward, stays, elapsed, UNIFORM), 100)
    assert not whole.daily.equals(other.daily)


def test_path_seeds_are_spawned_children():
    # Source: numpy SeedSequence.spawn as the reference: path i gets the i-th child.
    children = np.random.SeedSequence(2024).spawn(6)
    ours = path_seeds(2024, 3, first_path=3)
    for child, seed in zip(children[3:], ours, strict=True):
        np.testing.assert_array_equal(child.generate_state(4), seed.generate_state(4))


class RecordingStays:
    """Wraps a stay distribution and keeps every sample drawn."""

    def __init__(self, stays):
        self.stays, self.mean, self.drawn = stays, stays.mean, []

    def sample(self, rng, size):
        self.drawn.append(self.stays.sample(rng, size))
        return self.drawn[-1]

    def sample_remaining(self, rng, elapsed):
        self.drawn.append(self.stays.sample_remaining(rng, elapsed))
        return self.drawn[-1]


def test_two_ward_plans_share_stays():
    # Common random numbers: the stays drawn do not depend on beds or policy.
    arrivals = poisson_paths(6, 5, np.full(30, 5.0))
    plans = [WardSettings(beds=18), WardSettings(beds=30, policy="divert", bed_changes=CLOSURES)]
    runs = []
    for ward in plans:
        stays = RecordingStays(Gamma.from_mean_sd(5, 3))
        simulate_ward(arrivals, WardModel(START, ward, stays, np.array([1.0, 4.0]), UNIFORM), 7)
        runs.append(stays.drawn)
    for first, second in zip(*runs, strict=True):
        np.testing.assert_array_equal(first, second)


def test_closing_beds_moves_nobody():
    # Worked example of the closing-bed rule: 10 beds, 10 patients each with 4.5 days to go;
    # 5 beds close from day 1 to day 9. Nobody is moved, nobody new is admitted until the
    # 10 leave at 108 h (day 4), after which the ward holds at most the 5 beds open.
    arrivals = np.full((1, 12), 2)
    ward = WardSettings(
        beds=10, policy="divert", bed_changes=(BedChange(date(2024, 1, 2), date(2024, 1, 10), -5),)
    )
    result = simulate_ward(
        arrivals, WardModel(START, ward, FixedStay(4.5), np.zeros(10), UNIFORM), 1
    )
    daily = result.daily
    np.testing.assert_array_equal(daily["census"][:4], 10)
    np.testing.assert_array_equal(daily["peak_occupancy"][:4], 10)
    np.testing.assert_array_equal(daily["beds_open"][:4], [10, 5, 5, 5])
    np.testing.assert_array_equal(daily["diverted"][:4], 2)
    np.testing.assert_array_equal(daily["bed_admissions"][:4], 0)
    assert daily["discharges"][4] == 10
    assert (daily["peak_occupancy"][5:10] <= 5).all()


def test_waiting_patients_take_beds_first_come_first_served():
    # Worked example: 1 bed, fixed 1-day stays, 3 arrivals on day 0 and none after. The first
    # takes the bed; the others wait one and two days: (t1 + 24 - t2) + (t1 + 48 - t3) hours.
    arrivals = np.array([[3, 0, 0, 0, 0]])
    result = simulate_ward(
        arrivals, WardModel(START, WardSettings(beds=1), FixedStay(1.0), NONE_IN, UNIFORM), 4
    )
    daily = result.daily
    assert daily["waited"].tolist() == [2, 0, 0, 0, 0]
    assert daily["queue"].tolist() == [2, 1, 0, 0, 0]
    assert daily["bed_admissions"].tolist() == [1, 1, 1, 0, 0]
    assert daily["discharges"].tolist() == [0, 1, 1, 1, 0]
    assert 24 < daily["wait_hours"][0] < 72


# --- Properties ----------------------------------------------------------------------------------


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
def test_properties(counts, beds, changes, policy, inpatients, seed):
    ward = drawn_ward(beds, changes, policy)
    arrivals = np.array([counts, counts[::-1]])
    elapsed = np.linspace(0.0, 5.0, inpatients)
    result = simulate_ward(
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


def test_shift_table_follows_occupancy():
    arrivals = poisson_paths(9, 30, np.full(14, 6.0))
    result = simulate_ward(
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


def test_tidy_tables_are_the_arrays_row_by_row():
    arrivals = poisson_paths(12, 3, np.full(5, 5.0))
    ward = WardSettings(beds=6, bed_changes=CLOSURES)
    stays = Exponential.from_mean(2.0)
    result = simulate_ward(
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


def test_summaries_across_paths():
    arrivals = poisson_paths(10, 200, np.full(10, 6.0))
    ward = WardSettings(beds=25, policy="divert")
    result = simulate_ward(
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


@pytest.mark.parametrize(
    ("change", "message"),
    [
        ({"settings": WardSettings(policy="queue")}, "policy"),
        (
            {"settings": WardSettings(beds=2, bed_changes=(BedChange(START, START, -3),))},
            "negative",
        ),
        ({"hour_profile": np.full(24, 0.05)}, "hour_profile"),
        ({"arrivals": np.array([[1, -1]])}, "arrivals"),
        ({"inpatients_elapsed": np.array([-1.0])}, "inpatients_elapsed"),
    ],
)
def test_bad_inputs_raise(change, message):
    model = {
        "start": START,
        "settings": WardSettings(),
        "stays": Exponential.from_mean(3.0),
        "inpatients_elapsed": NONE_IN,
        "hour_profile": UNIFORM,
    }
    arrivals = change.pop("arrivals", np.array([[1, 2]]))
    with pytest.raises(PlannerError, match=message):
        simulate_ward(arrivals, WardModel(**(model | change)), 0)

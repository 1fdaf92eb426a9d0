"""Hindcast: scores on hand examples and published definitions, no look-ahead past the origin,
and calibration on a synthetic ward generated from a known process."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from scipy import stats
from wards import ROTA

from planner.errors import PlannerError
from planner.records.census import census_series
from planner.report.assumptions import hindcast_line
from planner.report.hindcast_report import write_hindcast_files
from planner.runs.hindcast import default_origins, hindcast, hindcast_origin, latest_hindcast
from planner.runs.run import load_history
from planner.scenario import load_scenario
from planner.summaries import hindcast_scores as scores

WEEKDAY = np.array([1.15, 1.05, 1.0, 1.0, 0.95, 0.8, 0.75])  # Monday..Sunday


def _synthetic_ward(folder, days=3 * 365, level=4.0, beds=60, horizon_weeks=2, seed=1):
    """Episode records of a known process, written with a scenario file: Poisson admissions
    with a weekly pattern, uniform times of day, lognormal stays (mean 5 d, sd 4 d), beds
    enough never to run out (mean census about 20)."""
    rng = np.random.default_rng(seed)
    dates = pd.date_range("2023-01-02", periods=days, freq="D")
    counts = rng.poisson(level * WEEKDAY[dates.day_of_week])
    admitted = np.repeat(dates.to_numpy(), counts) + pd.to_timedelta(
        rng.uniform(0, 24 * 60 - 1, counts.sum()).round(), unit="min"
    )
    sigma2 = math.log1p((4.0 / 5.0) ** 2)
    stays = rng.lognormal(math.log(5.0) - sigma2 / 2, math.sqrt(sigma2), counts.sum())
    discharged = pd.Series(admitted + pd.to_timedelta(np.round(stays * 1440), unit="min"))
    discharged[discharged >= dates[-1] + pd.Timedelta(days=1)] = pd.NaT
    episodes = pd.DataFrame({"admitted_at": admitted, "discharged_at": discharged})
    episodes.sort_values("admitted_at").to_csv(
        folder / "episodes.csv", index=False, date_format="%Y-%m-%d %H:%M"
    )
    (folder / "ward.toml").write_text(
        f'name = "synthetic"\nhorizon_weeks = {horizon_weeks}\nseed = 7\n'
        '[history]\nepisodes = "episodes.csv"\n'
        '[forecast]\nstrategy = "recursive"\nmax_lag = 14\nannual = false\n'
        f'[stay]\nmodel = "empirical"\n[beds]\nbase = {beds}\npolicy = "wait"\n' + ROTA
    )
    return load_scenario(folder / "ward.toml")


# --- scores on hand examples ----------------------------------------------------------------


def test_pinball_brier_and_reliability_by_hand():
    # Pinball (tau (y - q) if y >= q else (1 - tau)(q - y)): y = 10, q = 8 at 0.5 -> 1.0,
    # q = 12 at 0.9 -> 0.1 * 2 = 0.2; mean over the two levels 0.6.
    got = scores.pinball_by_day(np.array([10.0]), np.array([[8.0, 12.0]]), (0.5, 0.9))
    assert got[0] == pytest.approx(0.6)
    # Source: Brier (1950): mean of (p - o)^2: ((0.9-1)^2 + (0.2-0)^2 + (0.6-0)^2) / 3.
    assert scores.brier_score([0.9, 0.2, 0.6], [1, 0, 0]) == pytest.approx((0.01 + 0.04 + 0.36) / 3)
    table = scores.reliability_table([0.05, 0.07, 0.95, 0.55], [0, 1, 1, 0])
    assert list(table["days"]) == [2, 1, 1]
    assert list(table["observed_frequency"]) == [0.5, 0.0, 1.0]


def test_naive_chance_and_brier_by_hand():
    # History 10, 11, 13, 12, 14; census at the origin 12; 15 beds open; recorded census 14 on
    # horizon day 1 and 12 on day 2. 1-day changes 1, 2, -1, 2 give 13, 14, 11, 14 from 12;
    # 2-day changes 3, 1, 1 give 15, 13, 13.
    # Above beds - 2 = 13: day 1 2 of 4 = 1/2, day 2 1 of 3 = 1/3; outcomes 1 (14 > 13), 0.
    # Above beds = 15: day 1 0 of 4, day 2 0 of 3 (15 is not above 15); outcomes 0, 0.
    # Above beds - 4 = 11: day 1 3 of 4, day 2 3 of 3; outcomes 1, 1.
    history = np.array([10, 11, 13, 12, 14])
    chance = scores.naive_chance_above(history, 12, [13, 13])
    np.testing.assert_allclose(chance, [1 / 2, 1 / 3])
    np.testing.assert_allclose(scores.naive_chance_above(history, 12, [15, 15]), [0, 0])
    np.testing.assert_allclose(scores.naive_chance_above(history, 12, [11, 11]), [3 / 4, 1])
    # Source: Brier (1950), mean of (p - o)^2. Naive, above beds - 2: ((1/2 - 1)^2 +
    # (1/3 - 0)^2) / 2 = (1/4 + 1/9) / 2 = 13/72; above beds: 0; above beds - 4:
    # ((3/4 - 1)^2 + 0) / 2 = 1/32. The model's chances 0.9 and 0.2 above beds - 2:
    # (0.01 + 0.04) / 2 = 0.025, skill 1 - 0.025 / (13/72) = 1 - 1.8/13 = 11.2/13.
    bands = {f"{who}_{side}{p}": [0.0, 0.0] for who in ("model", "naive")
             for side in ("lo", "hi") for p in scores.INTERVALS}  # fmt: skip
    table = pd.DataFrame({
        "origin": ["2026-01-05"] * 2, "horizon_week": [1, 1], "census": [14, 12],
        "beds_open": [15, 15], "model_pinball": [1.0, 1.0], "naive_pinball": [2.0, 2.0], **bands,
        "p_over_beds": [0.0, 0.0], "naive_p_over_beds": [0.0, 0.0],
        "p_over_beds_minus_2": [0.9, 0.2], "naive_p_over_beds_minus_2": [1 / 2, 1 / 3],
        "p_over_beds_minus_4": [1.0, 1.0], "naive_p_over_beds_minus_4": [3 / 4, 1.0],
    })  # fmt: skip
    thresholds = {"p_over_beds": 0, "p_over_beds_minus_2": 2, "p_over_beds_minus_4": 4}
    overall = scores.summary_by_week(table, thresholds).iloc[0]
    assert overall["naive_brier_over_beds_minus_2"] == pytest.approx(13 / 72)
    assert overall["model_brier_over_beds_minus_2"] == pytest.approx(0.025)
    assert overall["brier_skill_over_beds_minus_2"] == pytest.approx(11.2 / 13)
    assert overall["naive_brier_over_beds"] == 0 and np.isnan(overall["brier_skill_over_beds"])
    assert overall["naive_brier_over_beds_minus_4"] == pytest.approx(1 / 32)
    assert overall["model_brier_over_beds_minus_4"] == 0


def test_naive_quantiles_are_census_changes():
    census = np.array([10, 11, 13, 12, 14])
    # By hand: 1-day changes 1, 2, -1, 2 (median 1.5); 2-day changes 3, 1, 1 (median 1).
    q = scores.census_changes_quantiles(census, 2, (0.5,))
    np.testing.assert_allclose(q[:, 0], [1.5, 1.0])


def test_pit_chi_square_is_pearsons_statistic():
    pit = np.random.default_rng(1).random(200) ** 1.3
    counts, statistic, p_value = scores.pit_chi_square(pit)
    expected = counts.sum() / 10
    # Source: Pearson chi-square, sum (O - E)^2 / E, 9 degrees of freedom.
    assert statistic == pytest.approx(np.sum((counts - expected) ** 2 / expected))
    assert p_value == pytest.approx(stats.chi2.sf(statistic, 9))


def test_randomised_pit_is_uniform_for_a_calibrated_count_forecast():
    rng = np.random.default_rng(2)
    paths = rng.poisson(6.0, size=(4000, 600))
    actual = rng.poisson(6.0, size=600)
    pit = scores.randomised_pit(paths, actual, rng)
    # Source: Czado, Gneiting & Held (2009): the randomised PIT of a calibrated count forecast
    # is uniform; the plain PIT F(y) is not (it piles up at the upper end).
    assert stats.kstest(pit, "uniform").pvalue > 1e-3
    plain = np.mean(paths <= actual[None, :], axis=0)
    assert stats.kstest(plain, "uniform").pvalue < 1e-6


def test_default_origins_span_the_last_26_weeks():
    origins = default_origins(pd.Timestamp("2026-11-29"))
    assert len(origins) == 13
    assert origins[-1] == pd.Timestamp("2026-11-16")  # 14 days before the day after the end
    assert origins[0] == pd.Timestamp("2026-11-30") - pd.Timedelta(weeks=26)


# --- the hindcast on a synthetic ward -------------------------------------------------------


def test_no_look_ahead_past_the_origin(tmp_path):
    scenario = _synthetic_ward(tmp_path, days=400)
    history = load_history(scenario)
    census = census_series(history.episodes, last_day=history.last_day)
    origin = pd.Timestamp("2024-01-01")
    first = hindcast_origin(scenario, history, census, origin, 50, 3)
    # Rewrite everything after the origin: later admissions vanish, later discharges move.
    episodes = history.episodes.copy()
    episodes = episodes[episodes["admitted_at"] < origin]
    late = episodes["discharged_at"] > origin
    episodes.loc[late, "discharged_at"] += pd.Timedelta(days=3)
    admissions = history.admissions.where(history.admissions.index < origin, 0)
    changed = history.__class__(admissions, episodes, history.start)
    second = hindcast_origin(scenario, changed, census, origin, 50, 3)
    model = [c for c in first.columns if c.startswith(("model_", "p_over", "naive_"))]
    model = [c for c in model if not c.endswith("pinball")]
    pd.testing.assert_frame_equal(first[model], second[model])


def _check_calibration(result, low=0.7, high=0.9, p_min=1e-3):
    overall = result.summary.set_index("horizon_week").loc[0]
    assert low <= overall["model_coverage_80"] <= high
    assert (
        overall["model_coverage_50"] < overall["model_coverage_80"] < overall["model_coverage_95"]
    )
    # PIT: one day per origin-week; origins 14 days apart and a 2-week horizon never share a
    # day, but the two weeks of one origin are correlated (census autocorrelation at lag 7 is
    # about 0.25 with 5-day stays), which makes the chi-square reject too often; a threshold of
    # p > 0.001 allows for that.
    assert result.p_value > p_min, result.pit_counts


def test_synthetic_ward_is_calibrated(tmp_path):
    scenario = _synthetic_ward(tmp_path)
    result = hindcast(scenario, weeks=104, every_days=14, paths=150)
    assert len(result.origins) == 52
    _check_calibration(result)
    # Every scored day has a recorded census, and days past the history are not scored.
    assert result.table["date"].max() <= load_history(scenario).last_day
    write_hindcast_files(result, scenario, tmp_path / "out")
    quote = latest_hindcast([tmp_path], scenario)
    line = hindcast_line(quote)
    rows = pd.read_csv(tmp_path / "out" / "hindcast.csv")
    held = np.mean((rows["census"] >= rows["model_lo80"]) & (rows["census"] <= rows["model_hi80"]))
    assert quote.weeks == 104 and quote.origins == 52
    assert line.startswith("Over the last 104 weeks") and f"held {held:.0%} of days" in line
    assert "Caution" in (tmp_path / "out" / "hindcast.html").read_text()
    other = _synthetic_ward(tmp_path, beds=61)  # another setup: no quote
    assert latest_hindcast([tmp_path], other) is None


def test_same_seed_same_numbers_and_bad_arguments(tmp_path):
    scenario = _synthetic_ward(tmp_path, days=400)
    origins = pd.to_datetime(["2023-11-06", "2023-12-04"])
    one = hindcast(scenario, origins=origins, paths=40)
    alone = hindcast(scenario, origins=origins[1:], paths=40)
    # Each origin has its own stream: dropping another origin changes nothing.
    later = one.table[one.table["origin"] == origins[1]].reset_index(drop=True)
    pd.testing.assert_frame_equal(later, alone.table)
    with pytest.raises(PlannerError, match="origins"):
        hindcast(scenario, origins=["2030-01-01"], paths=40)


@pytest.mark.slow
@pytest.mark.parametrize("seed", [2, 3, 4])
def test_synthetic_ward_is_calibrated_other_seeds(tmp_path, seed):
    _check_calibration(hindcast(_synthetic_ward(tmp_path, seed=seed), weeks=104, paths=300))


@pytest.mark.slow
@pytest.mark.parametrize("seed", [5, 6, 7])
def test_synthetic_ward_is_calibrated_long_horizon_parallel(tmp_path, seed):
    scenario = _synthetic_ward(tmp_path, horizon_weeks=13, seed=seed)
    result = hindcast(scenario, weeks=104, every_days=14, paths=400, workers=2)
    # 13-week horizons from origins 14 days apart overlap, so the PIT days are more dependent:
    # only the coverage bounds are asserted here.
    overall = result.summary.set_index("horizon_week").loc[0]
    assert 0.7 <= overall["model_coverage_80"] <= 0.9
    serial = hindcast(scenario, origins=result.origins[:2], paths=400)
    first_two = result.table[result.table["origin"].isin(result.origins[:2])]
    # pit_sample depends on the other origins (each date once, from the latest origin).
    pd.testing.assert_frame_equal(first_two.reset_index(drop=True).drop(columns="pit_sample"),
                                  serial.table.drop(columns="pit_sample"))  # fmt: skip


def test_hindcast_command_and_the_run_report_quotes_it(tmp_path):
    from click.testing import CliRunner

    from planner.cli import cli

    scenario = _synthetic_ward(tmp_path, days=2 * 365)
    runs = tmp_path / "outputs"
    hindcast = CliRunner().invoke(
        cli,
        [
            "hindcast",
            str(scenario.source),
            "--out",
            str(runs / "h"),
            "--paths",
            "40",
            "--origins",
            "3",
            "--jobs",
            "1",
        ],
    )
    assert hindcast.exit_code == 0, hindcast.output
    assert "80% census band of this setup held" in hindcast.output
    summary = pd.read_csv(runs / "h" / "hindcast_summary.csv").iloc[0]
    lines = hindcast.output.splitlines()
    for words, name in (("beds - 2", "over_beds_minus_2"), ("beds - 4", "over_beds_minus_4")):
        line = next(text for text in lines if f"Brier score, census above {words} (" in text)
        model, naive = summary[f"model_brier_{name}"], summary[f"naive_brier_{name}"]
        assert f"model {model:.4f}, naive baseline {naive:.4f}; " in line
    assert {"hindcast.csv", "hindcast.html", "pit.png", "coverage.png"} <= {
        p.name for p in (runs / "h").iterdir()
    }
    run = CliRunner().invoke(
        cli, ["run", str(scenario.source), "--out", str(runs / "r"), "--paths", "20"]
    )
    assert run.exit_code == 0, run.output
    page = (runs / "r" / "report.html").read_text()
    assert "80% census band of this setup held" in page
    assert "No hindcast has been run" not in page
    # Another setup (more beds) is not quoted the hindcast of this one.
    other = tmp_path / "other.toml"
    other.write_text(scenario.source.read_text().replace("base = 60", "base = 61"))
    run = CliRunner().invoke(cli, ["run", str(other), "--out", str(runs / "o"), "--paths", "20"])
    assert "No hindcast has been run" in (runs / "o" / "report.html").read_text()


def test_the_pit_test_counts_each_date_once():
    # Origins 14 days apart with 13-week horizons forecast the same dates; the chi-square
    # test of the PIT assumes independent values, so a date enters once (common practice:
    # one value per verified date).
    import pandas as pd

    from planner.runs.hindcast import one_pit_per_date

    origins = pd.to_datetime(["2026-01-01", "2026-01-15", "2026-01-29"])
    rows = []
    for origin in origins:
        for day in range(1, 43):
            rows.append({"origin": origin, "date": origin + pd.Timedelta(days=day - 1),
                         "pit_sample": (day - 1) % 7 + 1 == 4})  # fmt: skip
    kept = one_pit_per_date(pd.DataFrame(rows))
    sampled = kept[kept["pit_sample"]]
    assert sampled["date"].is_unique
    assert set(sampled["date"]) == {r["date"] for r in rows if r["pit_sample"]}
    latest = sampled.groupby("date")["origin"].max()
    for date, origin in latest.items():
        assert origin == max(o for o in origins if o <= date)

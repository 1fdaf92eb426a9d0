"""End-to-end runs on small scenarios with known answers, and every command via CliRunner."""

from __future__ import annotations

import json
from dataclasses import replace
from datetime import date

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner
from wards import ROTA

from planner.cli import cli
from planner.runs.run import run_scenario
from planner.scenario import load_scenario
from planner.simulate.queueing import erlang_b

RATE = 5.0  # admissions per day
STAY = 2.0  # mean stay, days: offered load a = 10 beds


@pytest.fixture(scope="module")
def ward_folder(tmp_path_factory):
    """A constant-rate Poisson admissions history (400 days) and a plan file template."""
    folder = tmp_path_factory.mktemp("ward")
    days = pd.date_range("2025-01-01", periods=400, freq="D")
    counts = np.random.default_rng(7).poisson(RATE, len(days))
    pd.DataFrame({"date": days.strftime("%Y-%m-%d"), "admissions": counts}).to_csv(
        folder / "admissions.csv", index=False
    )
    return folder


def plan(folder, name, beds, policy="divert", paths=200, extra=""):
    path = folder / f"{name}.toml"
    path.write_text(
        f'name = "{name}"\nhorizon_weeks = 2\npaths = {paths}\nseed = 11\n{extra}'
        '[history]\nadmissions = "admissions.csv"\n'
        "[forecast]\nstrategy = 'recursive'\nmax_lag = 7\nweekday = false\nannual = false\n"
        "backtest_origins = 4\n"
        f"[stay]\nmodel = 'lognormal'\nmean = {STAY}\nsd = 1.5\n"
        f"[beds]\nbase = {beds}\npolicy = '{policy}'\n{ROTA}"
        "[costs]\nbed_day = 100.0\ndiverted_patient = 500.0\n"
    )
    return path


def test_plenty_of_beds_never_short(ward_folder):
    # Source: Erlang B (Erlang 1917): B(40, 10) is about 1e-12, so no path should block.
    assert erlang_b(40, RATE * STAY) < 1e-10
    run = run_scenario(load_scenario(plan(ward_folder, "plenty", 40)))
    assert run.weekly.bed_shortfall.mean() == 0.0


def test_far_too_small_ward_always_short(ward_folder):
    # Source: Erlang B (Erlang 1917): with 2 beds and a = 10 erlangs B(2, 10) = 0.82, so every
    # week of every path has patients diverted, and the share diverted is close to B.
    run = run_scenario(load_scenario(plan(ward_folder, "tiny", 2)))
    assert run.weekly.bed_shortfall.mean() == 1.0
    arrivals = run.forecast.paths.sum()
    diverted = run.weekly.diverted.sum()
    # The forecast paths are a bootstrap of a Poisson history, so the arrival process is only
    # close to Poisson; 0.03 is about 5 Monte Carlo standard errors here.
    assert abs(diverted / arrivals - erlang_b(2, RATE * STAY)) < 0.03


def test_run_command_writes_the_report(ward_folder, tmp_path):
    out = tmp_path / "run"
    result = CliRunner().invoke(
        cli, ["run", str(plan(ward_folder, "small", 9, "wait", 40)), "--out", str(out)]
    )
    assert result.exit_code == 0, result.output
    expected = {
        "weekly.csv",
        "daily.csv",
        "shifts.csv",
        "forecast.csv",
        "report.html",
        "run.json",
        "admissions.png",
        "census.png",
        "shortfall.png",
        "nurses.png",
        "discharges.png",
    }
    assert expected <= {p.name for p in out.iterdir()}
    weekly = pd.read_csv(out / "weekly.csv")
    for column in (
        "week_start",
        "p_bed_shortfall",
        "p_bed_shortfall_se",
        "expected_patients_affected",
        "expected_wait_hours",
        "peak_census_p50",
        "peak_census_p90",
        "beds_open",
        "p_staff_shortfall",
        "expected_short_shifts",
    ):
        assert column in weekly.columns
    assert len(weekly) == 2
    assert ((weekly["p_bed_shortfall"] >= 0) & (weekly["p_bed_shortfall"] <= 1)).all()
    page = (out / "report.html").read_text()
    assert "professional judgement" in page and "data:image/png;base64," in page
    record = json.loads((out / "run.json").read_text())
    assert record["seed"] == 11 and record["paths"] == 40
    assert all(len(digest) == 64 for digest in record["inputs"].values())
    assert "P(no bed)" in result.output
    # Refuses to overwrite without --overwrite.
    again = CliRunner().invoke(cli, ["run", str(plan(ward_folder, "small", 9)), "--out", str(out)])
    assert again.exit_code == 2 and "--overwrite" in again.output


def test_compare_more_beds_fewer_shortfalls(ward_folder, tmp_path):
    small = plan(ward_folder, "eight", 8, paths=300)
    large = plan(ward_folder, "eleven", 11, paths=300)
    out = tmp_path / "compare"
    result = CliRunner().invoke(cli, ["compare", str(small), str(large), "--out", str(out)])
    assert result.exit_code == 0, result.output
    table = pd.read_csv(out / "comparison.csv")
    bigger = table[table["scenario"] == "eleven"]
    assert (bigger["diff_p_bed_shortfall"] < 0).all()
    # Common random numbers: the paired standard error is below the independent-runs one.
    assert (bigger["diff_p_bed_shortfall_se"] < bigger["diff_p_bed_shortfall_se_independent"]).all()
    costs = pd.read_csv(out / "costs.csv")
    assert costs.loc[1, "incremental_plan_cost"] == pytest.approx(3 * 100.0 * 14)
    assert (out / "comparison.html").is_file()


@pytest.mark.parametrize(
    ("command", "files"),
    [
        ("forecast", {"forecast.csv", "admissions.png"}),
        ("backtest", {"backtest.csv"}),
        ("simulate", {"daily.csv", "shifts.csv"}),
    ],
)
def test_commands_write_their_files(ward_folder, tmp_path, command, files):
    out = tmp_path / command
    args = [command, str(plan(ward_folder, "cmd", 9, paths=30)), "--out", str(out)]
    result = CliRunner().invoke(cli, args)
    assert result.exit_code == 0, result.output
    assert files <= {p.name for p in out.iterdir()}


def test_forecast_csv_columns(ward_folder, tmp_path):
    out = tmp_path / "f"
    CliRunner().invoke(
        cli, ["forecast", str(plan(ward_folder, "f", 9, paths=30)), "--out", str(out)]
    )
    table = pd.read_csv(out / "forecast.csv")
    assert list(table.columns) == ["date", "mean", "q05", "q10", "q25", "q50", "q75", "q90", "q95"]
    assert len(table) == 14
    assert (table[["q05", "q25", "q50", "q75", "q95"]].diff(axis=1).iloc[:, 1:] >= 0).all().all()


def test_backtest_command_shows_the_backtest_that_chose_the_strategy(ward_folder):
    from planner.runs.run import backtest_step, forecast_step, load_history

    scenario = load_scenario(plan(ward_folder, "auto", 9, paths=60))
    settings = replace(scenario.forecast, strategy="auto", backtest_paths=60)
    scenario = replace(scenario, forecast=settings)
    history = load_history(scenario)
    chosen = forecast_step(scenario, history, 60, 3).summary
    shown = backtest_step(scenario, history, 60, 3)
    pd.testing.assert_frame_equal(chosen.backtest.table, shown.table)
    overall = shown.overall()["pinball"]
    assert chosen.strategy == (
        "recursive" if overall["recursive"] <= overall["direct"] else "direct"
    )


def test_engines_and_jobs_give_identical_files(ward_folder, tmp_path):
    scenario = str(plan(ward_folder, "same", 6, "wait", 60))
    outputs = []
    for number, options in enumerate(
        (["--engine", "simpy", "--jobs", "1"], ["--engine", "fast", "--jobs", "2"])
    ):
        out = tmp_path / f"run{number}"
        result = CliRunner().invoke(cli, ["run", scenario, "--out", str(out), *options])
        assert result.exit_code == 0, result.output
        outputs.append(out)
    for name in ("weekly.csv", "daily.csv", "shifts.csv", "forecast.csv"):
        assert (outputs[0] / name).read_bytes() == (outputs[1] / name).read_bytes(), name


def test_a_later_start_simulates_the_days_before_it(ward_folder):
    # The ward is simulated from the day after the history; starting the report two weeks
    # later must give exactly weeks 3.. of a run that reports from the first day.
    early = replace(load_scenario(plan(ward_folder, "early", 9, "wait", 40)), horizon_weeks=4)
    late = replace(early, horizon_weeks=2, start=date(2026, 2, 19))
    whole, later = run_scenario(early), run_scenario(late)
    assert later.history.start == whole.history.start + pd.Timedelta(days=14)
    for field in ("bed_shortfall", "patients_affected", "peak_census", "short_shifts"):
        np.testing.assert_array_equal(
            getattr(later.weekly, field), getattr(whole.weekly, field)[:, 2:], err_msg=field
        )
    assert str(later.weekly.week_start[0].date()) == "2026-02-19"

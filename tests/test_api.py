"""The Python interface gives what the command line gives: the same tables for the same
scenario and options, plans changed by their scenario keys, histories given as tables."""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner

import planner
from planner.api import _options
from planner.cli import cli
from planner.errors import PlannerError

DEMO = Path(__file__).resolve().parents[1] / "scenarios"
PATHS = "120"


@pytest.fixture(scope="module")
def demo_run():
    return planner.run(paths=int(PATHS), jobs=1)


def test_run_gives_the_command_line_tables(demo_run, tmp_path):
    out = tmp_path / "cli"
    result = CliRunner().invoke(cli, ["run", "--paths", PATHS, "--jobs", "1", "--out", str(out)])
    assert result.exit_code == 0, result.output
    for name in ("weekly", "daily", "shifts"):
        written = pd.read_csv(out / f"{name}.csv")
        ours = getattr(demo_run, name)
        folder = planner.write_report(demo_run, tmp_path / "api")
        pd.testing.assert_frame_equal(pd.read_csv(folder / f"{name}.csv"), written)
        assert len(ours) == len(written)


def test_with_changes_is_the_scenario_file_with_those_keys(tmp_path):
    file = tmp_path / "thirty.toml"
    file.write_text(f'extends = "{DEMO / "baseline.toml"}"\n[beds]\nbase = 30\n')
    from_file = planner.run(file, paths=60, jobs=1)
    changed = planner.run(planner.load_scenario().with_changes({"beds.base": 30}), paths=60, jobs=1)
    pd.testing.assert_frame_equal(changed.weekly, from_file.weekly)
    assert changed.scenario.ward.beds == 30


def test_with_changes_is_checked_like_a_file():
    plan = planner.load_scenario()
    with pytest.raises(PlannerError, match="beds.bases: unknown key"):
        plan.with_changes({"beds.bases": 30})
    with pytest.raises(PlannerError, match="discharge.seven_day: must be 0 to 1"):
        plan.with_changes({"discharge.seven_day": 2.0})


def larch_episodes(plan) -> pd.DataFrame:
    """Larch Ward's rows of the demo export, read with pandas alone."""
    export = pd.read_csv(plan.episodes_file)
    larch = export[export["Ward"] == "Larch"]
    return pd.DataFrame({
        "admitted_at": pd.to_datetime(larch["Admission Date"], format="%d/%m/%Y %H:%M"),
        "discharged_at": pd.to_datetime(larch["Discharge Date"], format="%d/%m/%Y %H:%M"),
    })  # fmt: skip


def test_history_as_tables_gives_the_same_run(demo_run):
    plan = planner.load_scenario()
    episodes = larch_episodes(plan)
    again = planner.run(plan, episodes=episodes, paths=120, jobs=1)
    pd.testing.assert_frame_equal(again.weekly, demo_run.weekly)
    # The daily admissions given too (counted from the same episodes): the same run again.
    daily = episodes["admitted_at"].dt.normalize().value_counts().sort_index()
    days = pd.date_range(daily.index[0], episodes["discharged_at"].max().normalize())
    both = planner.run(plan, episodes=episodes, admissions=daily.reindex(days, fill_value=0),
                       paths=120, jobs=1)  # fmt: skip
    pd.testing.assert_frame_equal(both.weekly, demo_run.weekly)


@pytest.mark.parametrize(
    ("admissions", "message"),
    [
        (pd.Series([3, -1], index=pd.to_datetime(["2026-01-01", "2026-01-02"])), "whole number"),
        (pd.Series([3, 1], index=pd.to_datetime(["2026-01-01", "2026-01-03"])), "consecutive"),
        (pd.Series([3.5], index=pd.to_datetime(["2026-01-01"])), "whole number"),
    ],
)
def test_bad_tables_are_refused(admissions, message):
    with pytest.raises(PlannerError, match=message):
        planner.run(admissions=admissions, paths=10, jobs=1)


def test_bad_episode_tables_are_refused():
    episodes = pd.DataFrame({"admitted_at": pd.to_datetime(["2026-01-02"]),
                             "discharged_at": pd.to_datetime(["2026-01-01"])})  # fmt: skip
    with pytest.raises(PlannerError, match="row 0: discharged_at is before admitted_at"):
        planner.run(episodes=episodes, paths=10, jobs=1)
    with pytest.raises(PlannerError, match="missing column"):
        planner.run(episodes=episodes.drop(columns="discharged_at"), paths=10, jobs=1)


def test_compare_takes_plans_read_already(demo_run):
    plan = planner.load_scenario()
    both = planner.compare([plan, plan.with_changes({"beds.base": 30, "name": "30 beds"})],
                           paths=120, jobs=1)  # fmt: skip
    assert list(both.glance["scenario"]) == [plan.name, "30 beds"]
    pd.testing.assert_frame_equal(both.runs[0].summary.weekly, demo_run.weekly)
    first, second = (run.summary.weekly["p_bed_shortfall"] for run in both.runs)
    assert np.all(second <= first)  # more beds on the same patients never raise the risk


def test_defaults_are_the_command_lines():
    assert _options(None, None, None, None).jobs == (os.cpu_count() or 1)
    assert "run" in planner.__all__ and callable(planner.run)
    with pytest.raises(AttributeError):
        planner.no_such_function  # noqa: B018


def test_the_example_script_runs():
    script = Path(__file__).resolve().parents[1] / "docs" / "example_api.py"
    done = subprocess.run([sys.executable, str(script), "60"], capture_output=True, text=True,
                          timeout=600, env={**os.environ, "PLANNER_CACHE": ""})  # fmt: skip
    assert done.returncode == 0, done.stderr
    assert "same weekly table from a DataFrame: True" in done.stdout


def test_hospital_functions_give_the_command_line_files(tmp_path):
    from test_hospital_cli import LINKED, hospital

    path = hospital(tmp_path, LINKED)
    out = tmp_path / "cli"
    result = CliRunner().invoke(cli, ["run", str(path), "--paths", "40", "--jobs", "1",
                                      "--out", str(out)])  # fmt: skip
    assert result.exit_code == 0, result.output
    wards = planner.run_hospital(path, paths=40, jobs=1)
    folder = planner.write_report(wards, tmp_path / "api")
    for name in ("hospital.csv", "outlying.csv", "placements.csv"):
        assert (folder / name).read_bytes() == (out / name).read_bytes()
    assert list(wards.table.columns) == list(pd.read_csv(out / "hospital.csv").columns)
    both = planner.compare_hospitals([path, path], paths=40, jobs=1)
    assert (both.glance["diff_p_no_bed_anywhere"] == 0).all()  # a plan against itself
    sized = planner.size_hospital(path, target=0.5, paths=40)
    assert sized.met and len(sized.beds) == 2
    assert (planner.write_report(sized, tmp_path / "sized") / "sizing.csv").is_file()
    with pytest.raises(TypeError, match="no report for a str"):
        planner.write_report("report", tmp_path / "nothing")

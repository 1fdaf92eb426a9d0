"""Level changes and the drift alarm through the command line and the run report."""

from __future__ import annotations

import pandas as pd
from click.testing import CliRunner
from level_change_data import stepped_admissions
from wards import ROTA

from planner.cli import cli
from planner.report.assumptions import NO_DRIFT

SEED = 100  # a series whose declared step leaves the in-sample CUSUM quiet (as in 17 of 20)


def write_plan(folder, changes: str = "") -> tuple:
    history, change = stepped_admissions(SEED)
    history.rename_axis("date").reset_index().to_csv(folder / "ward.csv", index=False)
    plan = folder / "plan.toml"
    plan.write_text(
        "horizon_weeks = 4\npaths = 40\n[forecast]\nbacktest_origins = 13\nbacktest_paths = 20\n"
        f"{changes}"
        '[history]\nadmissions = "ward.csv"\n[stay]\nmean = 5.0\nsd = 4.0\n[beds]\nbase = 28\n'
        + ROTA
    )
    return plan, history, change


def test_an_undeclared_step_prints_the_drift_alarm(tmp_path):
    plan, _, change = write_plan(tmp_path)
    result = CliRunner().invoke(cli, ["forecast", str(plan), "--out", str(tmp_path / "f")])
    assert result.exit_code == 0, result.output
    lines = [line for line in result.output.splitlines() if line.startswith("Drift alarm")]
    assert len(lines) == 1
    assert "have run above the model since" in lines[0]
    assert lines[0].endswith("declare a level change under [[forecast.level_change]]")
    started = pd.Timestamp(lines[0].split(" since ")[1][:10])
    assert abs((started - change).days) <= 21
    run = CliRunner().invoke(cli, ["run", str(plan), "--out", str(tmp_path / "r")])
    assert run.exit_code == 0, run.output
    assert sum(line.startswith("Drift alarm") for line in run.output.splitlines()) == 1
    assert "Drift alarm: admissions have run above" in (tmp_path / "r" / "report.html").read_text()


def test_declared_changes_reach_the_report(tmp_path):
    history, change = stepped_admissions(SEED)
    announced = history.index[-1] + pd.Timedelta(days=8)
    changes = (
        f"[[forecast.level_change]]\ndate = {change.date()}\n"
        f"[[forecast.level_change]]\ndate = {announced.date()}\nrelative_change = 0.1\n"
    )
    plan, _, _ = write_plan(tmp_path, changes)
    result = CliRunner().invoke(cli, ["run", str(plan), "--out", str(tmp_path / "r")])
    assert result.exit_code == 0, result.output
    assert "Drift alarm" not in result.output
    page = (tmp_path / "r" / "report.html").read_text()
    assert f"from {change.date()} estimated at +" in page
    assert f"from {announced.date()} announced +10.0%" in page
    assert NO_DRIFT in page


def test_a_later_change_without_a_size_is_refused(tmp_path):
    history, _ = stepped_admissions(SEED)
    later = history.index[-1] + pd.Timedelta(days=8)
    plan, _, _ = write_plan(tmp_path, f"[[forecast.level_change]]\ndate = {later.date()}\n")
    result = CliRunner().invoke(cli, ["check", str(plan)])
    assert result.exit_code == 2
    assert result.output.strip() == (
        f"{plan}: forecast.level_change[1].relative_change: required for a change after "
        f"the history ends ({history.index[-1].date()}); give the expected change, e.g. 0.1 "
        f"for +10%"
    )

"""`planner size`, the [sizing] keys and `planner run`'s headline quote, through the command
line: files written, one-line errors with exit status 2, nothing half-written."""

from __future__ import annotations

from pathlib import Path

import pandas as pd
import pytest
from click.testing import CliRunner
from wards import demo_without_sizing

from planner.cli import cli
from planner.scenario import load_scenario

DEMO = Path(__file__).resolve().parents[1] / "scenarios"


def plan(tmp_path: Path, sizing: str, policy: str = "wait") -> Path:
    path = tmp_path / "plan.toml"
    # Four weeks and the recursive strategy (no backtest) keep the commands quick.
    path.write_text(
        f'extends = "{DEMO / "baseline.toml"}"\nhorizon_weeks = 4\n[forecast]\n'
        f'strategy = "recursive"\n[beds]\npolicy = "{policy}"\n{sizing}'
    )
    return path


def test_size_writes_the_files_and_says_the_answer(tmp_path):
    out = tmp_path / "out"
    result = CliRunner().invoke(
        cli, ["size", str(plan(tmp_path, "")), "--paths", "300", "--jobs", "1", "--out", str(out)]
    )
    assert result.exit_code == 0, result.output
    assert "(by default: shift_target 5%)" in result.output  # the demo gives measure and target
    assert "To keep the weekly chance of a patient finding no free bed at or under 5% in every " \
        "week, this ward needs" in result.output  # fmt: skip
    assert "professional judgement" in result.output
    names = {"sizing.csv", "sizing_candidates.csv", "roster.csv", "sizing.png", "sizing.html",
             "sizing.xlsx", "run.json"}  # fmt: skip
    assert names == {path.name for path in out.iterdir()}
    table = pd.read_csv(out / "sizing.csv")
    assert list(table["period"]) == [f"week {w}" for w in range(1, 5)] + ["overall"]
    overall = table.iloc[-1]
    # Source: definition: the ward needs what its busiest week needs, and with one bed fewer
    # some week is over the target.
    assert overall["beds_needed"] == table["beds_needed"].iloc[:-1].max()
    assert overall["risk"] <= 0.05 < overall["risk_one_fewer"]
    assert overall["beds_now"] == 28
    roster = pd.read_csv(out / "roster.csv")
    assert len(roster) == 14 and (roster["nurses_needed"] >= 2).all()
    assert (roster["p_short_needed"] <= 0.05).all()
    assert "professional judgement" in (out / "sizing.html").read_text()


def test_options_override_the_scenario(tmp_path):
    sizing = '[sizing]\nmeasure = "no_bed_share"\ntarget = 0.1\n'
    request = load_scenario(plan(tmp_path, sizing)).sizing
    assert (request.measure, request.target, request.defaults) == (
        "no_bed_share", 0.1, ("shift_target",))  # fmt: skip
    from planner.cli.sizing import sizing_request

    scenario = load_scenario(plan(tmp_path, sizing))
    # Another measure on the command line does not inherit the scenario's target.
    hours = sizing_request(scenario, "wait_hours", None, None)
    assert (hours.measure, hours.target) == ("wait_hours", 24.0)
    same = sizing_request(scenario, None, 0.02, 0.1)
    assert (same.measure, same.target, same.shift_target) == ("no_bed_share", 0.02, 0.1)


@pytest.mark.parametrize(
    ("sizing", "arguments", "message"),
    [
        ('[sizing]\ntarget = 1.5\n', [],
         "sizing.target: must be a share above 0 and below 1, got 1.5"),
        ('[sizing]\nmeasure = "beds"\n', [], "sizing.measure: must be one of"),
        ("", ["--target", "2"], "with --target: sizing.target: must be a share above 0 and "
         "below 1, got 2.0"),
        ("", ["--measure", "wait_hours"], 'wait_hours needs beds.policy = "wait"'),
    ],
)  # fmt: skip
def test_bad_targets_are_one_line_exit_2(tmp_path, sizing, arguments, message):
    out = tmp_path / "out"
    path = plan(tmp_path, sizing, policy="divert")
    result = CliRunner().invoke(cli, ["size", str(path), "--out", str(out), *arguments])
    assert result.exit_code == 2, result.output
    assert message in result.output
    assert len(result.output.strip().splitlines()) == 1
    assert "Traceback" not in result.output
    assert not out.exists()  # nothing half-written


def test_run_quotes_the_sizing_answer(tmp_path):
    out = tmp_path / "run"
    path = plan(tmp_path, '[sizing]\nmeasure = "no_bed_share"\n')
    result = CliRunner().invoke(
        cli, ["run", str(path), "--paths", "300", "--jobs", "1", "--out", str(out)]
    )
    assert result.exit_code == 0, result.output
    assert "To keep the share of patients finding no free bed at or under 5% in every week" \
        in result.output  # fmt: skip
    assert (out / "sizing.csv").is_file() and (out / "roster.csv").is_file()
    assert "What the ward needs" in (out / "report.html").read_text()


def test_run_without_a_target_does_not_size(tmp_path):
    out = tmp_path / "run"
    path = demo_without_sizing(tmp_path)
    assert load_scenario(path).sizing is None
    result = CliRunner().invoke(
        cli, ["run", str(path), "--paths", "100", "--jobs", "1", "--out", str(out)]
    )
    assert result.exit_code == 0, result.output
    assert "To keep" not in result.output and not (out / "sizing.csv").exists()


def test_compare_does_not_size_its_plans(tmp_path):
    # A comparison runs plans side by side; sizing each would multiply its time unasked.
    from planner.runs.compare import _plan

    path = plan(tmp_path, '[sizing]\nmeasure = "no_bed_share"\n')
    assert load_scenario(path).sizing is not None
    assert _plan(path).sizing is None


def test_cancellations_as_the_measure_need_a_planned_stream_that_cancels(tmp_path):
    out = tmp_path / "out"
    result = CliRunner().invoke(cli, ["size", str(plan(tmp_path, "")), "--measure",
                                      "cancelled_week", "--out", str(out)])  # fmt: skip
    assert result.exit_code == 2, result.output
    assert "sizing.measure: cancelled_week needs a [planned] stream" in result.output
    assert len(result.output.strip().splitlines()) == 1 and not out.exists()


def test_surgical_ward_sized_for_cancellations(tmp_path):
    path = tmp_path / "alder.toml"
    path.write_text(f'extends = "{DEMO / "surgical_ward.toml"}"\nhorizon_weeks = 4\n'
                    '[forecast]\nstrategy = "recursive"\n')  # fmt: skip
    out = tmp_path / "out"
    arguments = ["--measure", "cancelled_week", "--paths", "200", "--jobs", "1", "--out", str(out)]
    result = CliRunner().invoke(cli, ["size", str(path), *arguments])
    assert result.exit_code == 0, result.output
    assert "the weekly chance of a planned patient being cancelled at or under 5%" in result.output
    table = pd.read_csv(out / "sizing.csv")
    assert set(table["measure"]) == {"cancelled_week"}

"""Command-line behaviour through click's CliRunner: exit codes, one-line errors."""

from __future__ import annotations

from pathlib import Path

from click.testing import CliRunner
from wards import ROTA

from planner.cli import cli


def test_check_demo():
    result = CliRunner().invoke(cli, ["check"])
    assert result.exit_code == 0, result.output
    assert "baseline.toml: ok" in result.output
    assert "28 base" in result.output


def test_check_missing_file_is_one_line_exit_2(tmp_path):
    result = CliRunner().invoke(cli, ["check", str(tmp_path / "absent.toml")])
    assert result.exit_code == 2
    assert "scenario file not found" in result.output
    assert "Traceback" not in result.output
    assert len(result.output.strip().splitlines()) == 1


def test_refusals_start_with_the_file_through_the_entry_point(tmp_path):
    # The README's promise: a refusal is one line on stderr that starts with the file (or
    # key) it names, exit status 2, nothing on stdout, no traceback; run as a user would.
    import subprocess
    import sys

    absent = tmp_path / "absent.toml"
    done = subprocess.run(
        [sys.executable, "-m", "planner", "check", str(absent)],
        capture_output=True,
        text=True,
        cwd=Path(__file__).resolve().parents[1],
    )
    assert done.returncode == 2
    assert done.stdout == ""
    lines = done.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith(f"{absent}:"), done.stderr


def test_check_bad_history_file(tmp_path):
    (tmp_path / "ward.csv").write_text("date,admissions\n2026-01-01,3\n2026-01-01,2\n")
    (tmp_path / "plan.toml").write_text(
        '[history]\nadmissions = "ward.csv"\n[stay]\nmean = 4.0\nsd = 3.0\n[beds]\nbase = 20\n'
        + ROTA
    )
    result = CliRunner().invoke(cli, ["check", str(tmp_path / "plan.toml")])
    assert result.exit_code == 2
    assert "ward.csv: line 3: date 2026-01-01 appears twice" in result.output


def test_help_carries_the_caution():
    result = CliRunner().invoke(cli, ["--help"])
    assert result.exit_code == 0
    assert "professional judgement" in result.output


SCENARIOS = Path(__file__).resolve().parents[1] / "scenarios"


def over_beds_plan(tmp_path, extra: str = "") -> Path:
    """The demo ward (Larch, read from the hospital export) with 15 beds, fewer than the
    patients on the ward at the start."""
    plan = tmp_path / "small.toml"
    plan.write_text(
        f'extends = "{SCENARIOS / "baseline.toml"}"\n[history]\n{extra}[beds]\nbase = 15\n'
    )
    return plan


def test_more_patients_than_beds_at_the_start_is_refused(tmp_path):
    # Common practice: a ward cannot start with more patients in beds than beds, so such
    # records usually hold several wards; planner says so rather than simulating nonsense.
    result = CliRunner().invoke(cli, ["check", str(over_beds_plan(tmp_path))])
    assert result.exit_code == 2
    line = result.output.strip()
    assert "\n" not in line
    truth = (SCENARIOS / "data" / "kestrel_vale_truth.csv").read_text().splitlines()
    at_start = next(row for row in truth if row.startswith("2026-11-29,Larch,")).split(",")[-1]
    # Source: the demo generator's truth: Larch's census at 24:00 on the history's last day.
    assert f"{at_start} patients on the ward at 00:00 on 2026-11-30 but 15 beds open" in line
    assert "does the file hold several wards?" in line and 'history.over_beds = "allow"' in line
    allowed = over_beds_plan(tmp_path, 'over_beds = "allow"\n')
    assert CliRunner().invoke(cli, ["check", str(allowed)]).exit_code == 0


def test_check_marks_each_value_given_or_default():
    result = CliRunner().invoke(cli, ["check"])
    assert result.exit_code == 0, result.output
    lines = result.output.splitlines()
    beds = next(line for line in lines if line.strip().startswith("[beds]"))
    assert "base = 28 (given)" in beds
    discharge = next(line for line in lines if line.strip().startswith("[discharge]"))
    assert "timing = 'auto' (default)" in discharge
    assert "[[staffing.shift]]: 2 given" in result.output

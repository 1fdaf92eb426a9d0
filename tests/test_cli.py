"""Command-line behaviour through click's CliRunner: exit codes, one-line errors."""

from __future__ import annotations

from click.testing import CliRunner

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


def test_check_bad_history_file(tmp_path):
    (tmp_path / "ward.csv").write_text("date,admissions\n2026-01-01,3\n2026-01-01,2\n")
    (tmp_path / "plan.toml").write_text(
        '[history]\nadmissions = "ward.csv"\n[stay]\nmean = 4.0\nsd = 3.0\n'
    )
    result = CliRunner().invoke(cli, ["check", str(tmp_path / "plan.toml")])
    assert result.exit_code == 2
    assert "ward.csv: line 3: date 2026-01-01 appears twice" in result.output


def test_help_carries_the_caution():
    result = CliRunner().invoke(cli, ["--help"])
    assert result.exit_code == 0
    assert "professional judgement" in result.output

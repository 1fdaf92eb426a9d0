"""Output folders are written whole or not at all, and earlier runs are never damaged."""

from __future__ import annotations

import pytest
from click.testing import CliRunner

from planner.cli import cli
from planner.errors import PlannerError
from planner.outputs import atomic_folder, check_target
from tests.test_bad_input import GOOD, Case, plan, write_case


def contents(folder):
    """Every file below ``folder`` with its bytes."""
    return {str(p.relative_to(folder)): p.read_bytes() for p in folder.rglob("*") if p.is_file()}


def earlier_run(tmp_path):
    target = tmp_path / "runs" / "plan"
    target.mkdir(parents=True)
    (target / "weekly.csv").write_text("week_start,p_bed_shortfall\n2026-01-05,0.1\n")
    return target, contents(target)


def test_success_replaces_only_at_the_end(tmp_path):
    target, _ = earlier_run(tmp_path)
    with atomic_folder(target, overwrite=True) as folder:
        (folder / "daily.csv").write_text("new\n")
        assert (target / "weekly.csv").exists(), "the earlier run stays until the new is whole"
        assert not (target / "daily.csv").exists()
    assert contents(target) == {"daily.csv": b"new\n"}
    assert sorted(p.name for p in target.parent.iterdir()) == ["plan"], "no staging left"


@pytest.mark.parametrize("failure", [RuntimeError("disk full"), KeyboardInterrupt()])
def test_failure_leaves_earlier_folder_untouched(tmp_path, failure):
    target, before = earlier_run(tmp_path)
    with pytest.raises(type(failure)), atomic_folder(target, overwrite=True) as folder:
        (folder / "weekly.csv").write_text("half\n")
        raise failure
    assert contents(target) == before
    assert sorted(p.name for p in target.parent.iterdir()) == ["plan"], "no staging left"


def test_failure_leaves_no_new_folders(tmp_path):
    target = tmp_path / "outputs" / "deep" / "run"
    with pytest.raises(KeyboardInterrupt), atomic_folder(target) as folder:
        (folder / "x.csv").write_text("half\n")
        raise KeyboardInterrupt
    assert list(tmp_path.iterdir()) == [], "parent folders made for the run are removed too"


def test_non_empty_folder_refused_without_overwrite(tmp_path):
    target, before = earlier_run(tmp_path)
    with pytest.raises(PlannerError, match=r"folder exists and is not empty \(use --overwrite\)"):
        check_target(target, overwrite=False)
    (tmp_path / "file").write_text("x")
    with pytest.raises(PlannerError, match="exists and is not a folder"):
        check_target(tmp_path / "file", overwrite=True)
    check_target(tmp_path / "absent", overwrite=False)
    (tmp_path / "empty").mkdir()
    check_target(tmp_path / "empty", overwrite=False)  # an empty folder may be filled
    assert contents(target) == before


def small_ward(tmp_path):
    return write_case(tmp_path / "ward", Case("good", (), {"ward.csv": GOOD}, plan()))


def test_cli_refuses_non_empty_out_without_overwrite(tmp_path):
    target, before = earlier_run(tmp_path)
    result = CliRunner().invoke(cli, ["run", str(small_ward(tmp_path)), "--out", str(target)])
    assert result.exit_code == 2
    assert result.output.strip() == f"{target}: folder exists and is not empty (use --overwrite)"
    assert contents(target) == before


def test_cli_interrupted_report_keeps_earlier_run(tmp_path, monkeypatch):
    """Ctrl-C while the report files are being written: the earlier run's folder is as it
    was and no half folder is left beside it."""
    import planner.report.run_report as run_report

    real = run_report.write_run_files

    def interrupted(run, folder, *args):
        (folder / "weekly.csv").write_text("half a report\n")
        raise KeyboardInterrupt

    target, before = earlier_run(tmp_path)
    monkeypatch.setattr(run_report, "write_run_files", interrupted)
    argv = ["run", str(small_ward(tmp_path)), "--paths", "20", "--out", str(target)]
    result = CliRunner().invoke(cli, [*argv, "--overwrite"])
    assert result.exit_code != 0
    assert "Traceback" not in result.output
    assert contents(target) == before
    assert sorted(p.name for p in target.parent.iterdir()) == ["plan"]

    monkeypatch.setattr(run_report, "write_run_files", real)
    result = CliRunner().invoke(cli, [*argv, "--overwrite"])
    assert result.exit_code == 0, result.output
    assert {"weekly.csv", "daily.csv", "report.html", "run.json"} <= set(contents(target))
    assert contents(target)["weekly.csv"] != before["weekly.csv"]

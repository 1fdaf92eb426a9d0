"""The ``[discharge]`` keys through the command line: refusals (exit 2, one line naming the
scenario file and the key, no output folder) and what ``check`` says about discharges."""

from __future__ import annotations

import pytest
from click.testing import CliRunner
from test_bad_input import GOOD, Case, assert_one_line_error, plan, write_case

from planner.cli import cli

CASES = [
    Case("earlier by a day", ("discharge.earlier_hours: must be 0 to 23, got 30",),
         {"ward.csv": GOOD}, plan(tables="[discharge]\nearlier_hours = 30\n"), "plan.toml"),
    Case("seven-day above one", ("discharge.seven_day: must be 0 to 1, got 1.5",),
         {"ward.csv": GOOD}, plan(tables="[discharge]\nseven_day = 1.5\n"), "plan.toml"),
    Case("before noon above one", ("discharge.before_noon: must be 0 to 1, got 2",),
         {"ward.csv": GOOD}, plan(tables="[discharge]\nbefore_noon = 2.0\n"), "plan.toml"),
    Case("negative earlier", ("discharge.earlier_hours",),
         {"ward.csv": GOOD}, plan(tables="[discharge]\nearlier_hours = -2\n"), "plan.toml"),
    Case("unknown timing", ("discharge.timing",),
         {"ward.csv": GOOD}, plan(tables="[discharge]\ntiming = 'hourly'\n"), "plan.toml"),
    Case("calendar without episodes", ('discharge.timing: "calendar" learns discharges',),
         {"ward.csv": GOOD}, plan(tables="[discharge]\ntiming = 'calendar'\n"), "plan.toml"),
    Case("lever without calendar timing", ("discharge.seven_day: acts on calendar discharge",),
         {"ward.csv": GOOD}, plan(tables="[discharge]\nseven_day = 0.5\n"), "plan.toml"),
]  # fmt: skip


@pytest.mark.parametrize("case", CASES, ids=[case.name for case in CASES])
def test_bad_discharge_keys(tmp_path, case):
    given = write_case(tmp_path / "ward", case)
    for argv in (["check", str(given)], ["run", str(given), "--out", str(tmp_path / "out")]):
        result = CliRunner().invoke(cli, argv)
        assert_one_line_error(result, *case.expect)
        assert str(given) in result.output
        assert not (tmp_path / "out").exists()


def test_check_says_how_discharges_are_drawn():
    result = CliRunner().invoke(cli, ["check"])
    assert result.exit_code == 0, result.output
    line = next(x for x in result.output.splitlines() if x.startswith("discharges:"))
    assert "calendar timing learned from the episodes" in line
    assert "weekend discharge odds" in line

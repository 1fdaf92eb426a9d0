"""Bad input through the command line: one line naming the file and line or key, exit status
2, no traceback, and no output folder.

Each case writes a small ward (a daily file, maybe an episode file, a scenario) with one
thing wrong, then runs ``planner check`` and ``planner run --paths 20 --out DIR`` on it.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner

from planner.cli import cli

FIRST_DAY = "2026-01-01"
DAYS = 120


#: Admissions per day of the test ward (Poisson, mean 5, drawn once from a fixed seed).
COUNTS = [int(n) for n in np.random.default_rng(2026).poisson(5.0, DAYS)]


def daily_rows(days: int = DAYS, fmt: str = "%Y-%m-%d") -> list[str]:
    """``date,admissions`` rows of the test ward."""
    dates = pd.date_range(FIRST_DAY, periods=days, freq="D")
    return [f"{day.strftime(fmt)},{COUNTS[i]}" for i, day in enumerate(dates)]


def daily(rows: list[str] | None = None, header: str = "date,admissions") -> str:
    return "\n".join([header, *(daily_rows() if rows is None else rows)]) + "\n"


GOOD = daily()
SHIFT = (
    "[[staffing.shift]]\nname = 'day'\nstart = '07:00'\nend = '{end}'\npatients_per_nurse = "
    "{ratio}\nroster = {roster}\n[[staffing.shift]]\nname = 'night'\nstart = '19:00'\n"
    "end = '07:00'\npatients_per_nurse = 7\nroster = [3, 3, 3, 3, 3, 3, 3]\n"
)


def shifts(end="19:00", ratio=4, roster="[5, 5, 5, 5, 5, 5, 5]") -> str:
    return SHIFT.format(end=end, ratio=ratio, roster=roster)


def plan(top: str = "", history: str = 'admissions = "ward.csv"', tables: str = "") -> str:
    """A small, fast scenario: 2 weeks, recursive AR up to lag 7, stays from a mean, 24 beds
    and a day and night rota (unless ``tables`` gives shifts)."""
    rota = "" if "staffing.shift" in tables else shifts()
    return (
        f"name = 'Test ward'\nhorizon_weeks = 2\npaths = 20\nseed = 5\n{top}\n"
        f"[history]\n{history}\n"
        "[forecast]\nstrategy = 'recursive'\nmax_lag = 7\nannual = false\n"
        "[stay]\nmodel = 'lognormal'\nmean = 4.0\nsd = 3.0\n"
        f"[beds]\nbase = 24\n{tables}{rota}"
    )


@dataclass
class Case:
    """One bad input: the files to write, the file the message must name, what it says."""

    name: str
    expect: tuple[str, ...]
    files: dict[str, str | bytes] = field(default_factory=dict)
    scenario: str = field(default_factory=plan)
    names: str = "ward.csv"  # the file named in the message
    given: str = "plan.toml"  # the path given on the command line


def episode_plan() -> str:
    return plan(history='admissions = "ward.csv"\nepisodes = "episodes.csv"')


CASES = [
    Case("missing file", ("file not found",), {}, plan(history='admissions = "absent.csv"'),
         "absent.csv"),
    Case("missing column", ("line 1: missing column(s) admissions", "expected header"),
         {"ward.csv": daily(header="date,count")}),
    Case("misspelt column", ("missing column(s) admissions", "'admisions' for 'admissions'"),
         {"ward.csv": daily(header="date,admisions")}),
    Case("no header", ("missing column(s) date, admissions", "expected header: date,admissions"),
         {"ward.csv": "\n".join(daily_rows()) + "\n"}),
    Case("unparseable date", ("line 4: date 'yesterday' is not a date in the form YYYY-MM-DD",),
         {"ward.csv": daily([*daily_rows()[:2], "yesterday,3", *daily_rows()[3:]])}),
    Case("impossible date", ("line 2: date '2026-02-30' is not a date",),
         {"ward.csv": daily(["2026-02-30,3", *daily_rows()[1:]])}),
    Case("day-first dates", ("line 2: date '01/01/2026'", "history.date_format = '%d/%m/%Y'"),
         {"ward.csv": daily(daily_rows(fmt="%d/%m/%Y"))}),
    Case("mixed formats", ("line 5: date '04/01/2026'", "line 2 has '2026-01-01'", "mixes"),
         {"ward.csv": daily(daily_rows()[:3] + daily_rows(fmt="%d/%m/%Y")[3:])}),
    Case("declared format not met", ("line 2: date '2026-01-01' does not match "
                                      "history.date_format = '%d/%m/%Y'",),
         {"ward.csv": GOOD}, plan(history='admissions = "ward.csv"\ndate_format = "%d/%m/%Y"')),
    Case("date format without a year", ("history.date_format: must be a strptime format",),
         {"ward.csv": GOOD}, plan(history='admissions = "ward.csv"\ndate_format = "%d/%m"'),
         "plan.toml"),
    Case("duplicated date", ("line 6: date 2026-01-04 appears twice (also on line 5)",),
         {"ward.csv": daily([*daily_rows()[:4], "2026-01-04,1", *daily_rows()[4:]])}),
    Case("missing days", ("line 4: days missing from 2026-01-03 to 2026-01-05",
                          "history.fill_missing_days = true"),
         {"ward.csv": daily(daily_rows()[:2] + daily_rows()[5:])}),
    Case("dates out of order", ("line 3: dates are not in increasing order",),
         {"ward.csv": daily(daily_rows()[1::-1] + daily_rows()[2:])}),
    Case("negative count", ("line 3: admissions '-2' is not a non-negative whole number",),
         {"ward.csv": daily([daily_rows()[0], "2026-01-02,-2", *daily_rows()[2:]])}),
    Case("fractional count", ("line 3: admissions '2.5' is not a non-negative whole number",),
         {"ward.csv": daily([daily_rows()[0], "2026-01-02,2.5", *daily_rows()[2:]])}),
    Case("non-numeric count", ("line 3: admissions 'n/a' is not a non-negative whole number",),
         {"ward.csv": daily([daily_rows()[0], "2026-01-02,n/a", *daily_rows()[2:]])}),
    Case("infinite count", ("line 3: admissions 'inf' is not a non-negative whole number",),
         {"ward.csv": daily([daily_rows()[0], "2026-01-02,inf", *daily_rows()[2:]])}),
    Case("empty count", ("line 3: admissions '' is not a non-negative whole number",),
         {"ward.csv": daily([daily_rows()[0], "2026-01-02,", *daily_rows()[2:]])}),
    Case("ragged row", ("cannot be read as CSV",),
         {"ward.csv": daily([daily_rows()[0], "2026-01-02,3,4", *daily_rows()[2:]])}),
    Case("empty file", ("the file is empty",), {"ward.csv": ""}),
    Case("header only", ("no data rows below the header",), {"ward.csv": "date,admissions\n"}),
    Case("binary file", ("is not a text file (binary data)",),
         {"ward.csv": b"PK\x03\x04\x14\x00\x00\x00\x08\x00" + bytes(range(256))}),
    Case("UTF-16 file", ("is UTF-16 text",), {"ward.csv": GOOD.encode("utf-16")}),
    Case("neither UTF-8 nor Windows-1252", ("line 2: byte 0xe9 is not UTF-8 text, and byte "
                                             "0x81 on line 2 is not Windows-1252 either",),
         {"ward.csv": b"date,admissions\n2026-01-01,3 \xe9\x81\n"}),
    Case("folder given as a file", ("is a folder, not a CSV file",), {"ward.csv/x": GOOD}),
    Case("discharge before admission", ("line 3: discharged_at 2026-01-02 09:00 is before "
                                        "admitted_at 2026-01-02 10:00",),
         {"ward.csv": GOOD, "episodes.csv": "admitted_at,discharged_at\n2026-01-01 08:00,"
          "2026-01-03 10:00\n2026-01-02 10:00,2026-01-02 09:00\n"}, episode_plan(),
         "episodes.csv"),
    Case("duplicated episode", ("line 4: the same episode as line 2 (2026-01-01 08:00 to "
                                "2026-01-03 10:00)",),
         {"ward.csv": GOOD, "episodes.csv": "admitted_at,discharged_at\n2026-01-01 08:00,"
          "2026-01-03 10:00\n2026-01-02 10:00,\n2026-01-01 08:00,2026-01-03 10:00\n"},
         episode_plan(), "episodes.csv"),
    Case("day-first timestamps", ("line 2: admitted_at '01/02/2026 08:00'",
                                  "history.timestamp_format = '%d/%m/%Y %H:%M'"),
         {"ward.csv": GOOD, "episodes.csv": "admitted_at,discharged_at\n01/02/2026 08:00,\n"},
         episode_plan(), "episodes.csv"),
    Case("episodes after the daily history", ("has records on 2026-05-02, after the admissions "
                                              "history ends (2026-04-30)",),
         {"ward.csv": GOOD, "episodes.csv": "admitted_at,discharged_at\n2026-04-01 08:00,"
          "2026-05-02 10:00\n"}, episode_plan(), "episodes.csv"),
    # Start inside the history: both dates are named.
    Case("start inside the history", ("start: 2026-04-01 is inside the history, which runs to "
                                      "2026-04-30",),
         {"ward.csv": GOOD}, plan(top="start = 2026-04-01"), "plan.toml"),
    # 2 x max_lag 7 + 7 calendar terms (constant, 6 weekdays) + 14 spare days = 35.
    Case("history too short", ("history too short: 34 days", "needs at least 35"),
         {"ward.csv": daily(daily_rows(34))}),
    Case("unknown key", ("beds.bass: unknown key (did you mean 'base'?)",), {"ward.csv": GOOD},
         plan(tables="bass = 3\n"), "plan.toml"),
    Case("unknown table", ("stafing: unknown key (did you mean 'staffing'?)",),
         {"ward.csv": GOOD}, plan(tables="[stafing]\nminimum_nurses = 2\n"), "plan.toml"),
    Case("wrong type", ("paths: must be a whole number, got 'many'",), {"ward.csv": GOOD},
         plan().replace("paths = 20", "paths = 'many'"), "plan.toml"),
    Case("paths zero", ("paths: must be >= 1, got 0",), {"ward.csv": GOOD},
         plan().replace("paths = 20", "paths = 0"), "plan.toml"),
    Case("beds zero", ("beds.base: must be >= 1, got 0",), {"ward.csv": GOOD},
         plan().replace("base = 24", "base = 0"), "plan.toml"),
    Case("ratio zero", ("staffing.shift[1].patients_per_nurse: must be > 0",),
         {"ward.csv": GOOD}, plan(tables=shifts(ratio=0)), "plan.toml"),
    Case("roster too short", ("staffing.shift[1].roster: must be a list of 7 whole numbers",),
         {"ward.csv": GOOD}, plan(tables=shifts(roster="[5, 5, 5, 5, 5]")), "plan.toml"),
    Case("shifts overlap", ("overlaps 'night' (starts 19:00)",), {"ward.csv": GOOD},
         plan(tables=shifts(end="20:00")), "plan.toml"),
    Case("hours uncovered", ("hours uncovered, gap between 'day' (ends 18:00)",),
         {"ward.csv": GOOD},
         plan(tables=shifts(end="18:00")), "plan.toml"),
    Case("extends cycle", ("extends: cycle (plan.toml -> other.toml -> plan.toml)",),
         {"ward.csv": GOOD, "other.toml": 'extends = "plan.toml"\n'},
         'extends = "other.toml"\n' + plan(), "plan.toml"),
    Case("not TOML", ("not valid TOML",), {"ward.csv": GOOD}, "horizon_weeks = \n", "plan.toml"),
    Case("scenario is a CSV", ("is a data file, not a scenario (.toml)",), {"ward.csv": GOOD},
         given="ward.csv"),
]  # fmt: skip


def write_case(folder: Path, case: Case) -> Path:
    folder.mkdir(parents=True, exist_ok=True)
    for name, content in case.files.items():
        path = folder / name
        path.parent.mkdir(parents=True, exist_ok=True)
        if isinstance(content, bytes):
            path.write_bytes(content)
        else:
            path.write_text(content)
    (folder / "plan.toml").write_text(case.scenario)
    return folder / case.given


def assert_one_line_error(result, *expect: str) -> None:
    assert result.exit_code == 2, result.output
    assert "Traceback" not in result.output
    lines = result.output.strip().splitlines()
    assert len(lines) == 1, result.output
    for text in expect:
        assert text in lines[0], lines[0]


@pytest.mark.parametrize("case", CASES, ids=[case.name for case in CASES])
def test_bad_input_check_and_run(tmp_path, case):
    given = write_case(tmp_path / "ward", case)
    named = str(tmp_path / "ward" / case.names)
    for argv in (["check", str(given)], ["run", str(given), "--paths", "20", "--out"]):
        out = tmp_path / "out" / argv[0]
        if argv[0] == "run":
            argv = [*argv, str(out)]
        result = CliRunner().invoke(cli, argv)
        assert_one_line_error(result, *case.expect)
        assert named in result.output, result.output
        assert not (tmp_path / "out").exists(), "no output folder may be made"


def test_scenario_folder_is_refused(tmp_path):
    result = CliRunner().invoke(cli, ["check", str(tmp_path)])
    assert result.exit_code == 2
    assert "Traceback" not in result.output
    assert len(result.output.strip().splitlines()) == 1
    assert str(tmp_path) in result.output and "folder" in result.output


@pytest.mark.parametrize(
    "text",
    [
        GOOD.replace("\n", "\r\n"),  # Windows line ends
        "\ufeff" + GOOD,  # byte-order mark (Excel's "CSV UTF-8")
        GOOD.replace(",", ";"),  # semicolon separator (locales with a decimal comma)
        "\ufeff" + GOOD.replace(",", ";").replace("\n", "\r\n"),  # all three
    ],
    ids=["crlf", "bom", "semicolon", "all"],
)
def test_export_quirks_accepted_through_the_cli(tmp_path, text):
    case = Case("quirk", (), {"ward.csv": text.encode("utf-8")})
    result = CliRunner().invoke(cli, ["check", str(write_case(tmp_path, case))])
    assert result.exit_code == 0, result.output
    mean = sum(COUNTS) / DAYS
    assert f"history: {DAYS} days, 2026-01-01 to 2026-04-30, mean {mean:.2f}" in result.output


def test_declared_day_first_format_is_read(tmp_path):
    day_first = daily(daily_rows(fmt="%d/%m/%Y"))
    scenario = plan(history='admissions = "ward.csv"\ndate_format = "%d/%m/%Y"')
    case = Case("day first", (), {"ward.csv": day_first}, scenario)
    result = CliRunner().invoke(cli, ["check", str(write_case(tmp_path, case))])
    assert result.exit_code == 0, result.output
    assert f"history: {DAYS} days, 2026-01-01 to 2026-04-30" in result.output


def test_missing_days_filled_only_when_asked(tmp_path):
    gappy = daily(daily_rows()[:2] + daily_rows()[5:])  # 3 days missing
    scenario = plan(history='admissions = "ward.csv"\nfill_missing_days = true')
    case = Case("filled", (), {"ward.csv": gappy}, scenario)
    result = CliRunner().invoke(cli, ["check", str(write_case(tmp_path, case))])
    assert result.exit_code == 0, result.output
    kept = [count for i, count in enumerate(COUNTS) if i not in (2, 3, 4)]
    assert f"history: {DAYS} days" in result.output
    assert f"mean {sum(kept) / DAYS:.2f} admissions/day" in result.output


def test_error_inside_the_run_leaves_no_folder(tmp_path):
    """A bad value found only by the forecast (an unknown holiday country) stops the run
    after the output folder was begun: nothing is left behind."""
    scenario = plan().replace("annual = false", "annual = false\nholiday_country = 'XX'")
    case = Case("late", (), {"ward.csv": GOOD}, scenario)
    given = write_case(tmp_path / "ward", case)
    result = CliRunner().invoke(cli, ["run", str(given), "--out", str(tmp_path / "out" / "r")])
    assert_one_line_error(result, "holiday_country: unknown country code 'XX'")
    assert not (tmp_path / "out").exists()


def test_episodes_ending_before_the_daily_history_are_refused(tmp_path):
    days = pd.date_range("2024-01-01", periods=400)
    (tmp_path / "daily.csv").write_text(
        "date,admissions\n" + "".join(f"{d.date()},4\n" for d in days)
    )
    (tmp_path / "episodes.csv").write_text(
        "admitted_at,discharged_at\n2024-01-02 10:00,2024-01-05 10:00\n2024-06-01 09:00,\n"
    )
    (tmp_path / "plan.toml").write_text(
        '[history]\nadmissions = "daily.csv"\nepisodes = "episodes.csv"\n'
        "[forecast]\nstrategy = 'recursive'\nmax_lag = 7\n[beds]\nbase = 20\n" + shifts()
    )
    result = CliRunner().invoke(cli, ["check", str(tmp_path / "plan.toml")])
    assert result.exit_code == 2
    assert "episodes.csv: records end on 2024-06-01, before the admissions history" in result.output
    assert len(result.output.strip().splitlines()) == 1

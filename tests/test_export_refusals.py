"""Exports as they come, refused through the command line: every new [history] key and every
new refusal gives one line naming the file (and sheet), the line (or row) and the column, exit
status 2, no traceback and no output folder (``planner check`` and ``planner run``)."""

from __future__ import annotations

import export_data as data
import pytest
from click.testing import CliRunner
from test_bad_input import GOOD, Case, assert_one_line_error, daily, daily_rows, plan, write_case

from planner.cli import cli

HEADER = "Patient ID;Ward;Specialty;Admission Method;Admission Date;Discharge Date"
ROWS = [
    "KV1;Larch;General Medicine;Emergency;01/01/2026 08:00;03/01/2026 10:00",  # line 2
    "KV2;Rowan;Care of Older People;Elective;01/01/2026 09:00;NULL",  # line 3
    "KV3;Larch;General Medicine;A&E;02/01/2026 10:00;NULL",  # line 4
]
COLUMNS = (
    '[history.columns]\nadmitted_at = "Admission Date"\ndischarged_at = "Discharge Date"\n'
    'ward = "Ward"\nmethod = "Admission Method"\npatient = "Patient ID"\n'
)
METHODS = 'planned_methods = ["Elective"]\nemergency_methods = ["Emergency", "A&E"]\n'


def export(rows: list[str] | None = None, header: str = HEADER) -> str:
    return "\n".join([header, *(ROWS if rows is None else rows)]) + "\n"


def mapped(keys: str = 'ward = "Larch"\n', columns: str = COLUMNS, methods: str = METHODS) -> str:
    """A plan reading episodes.csv through the column mapping, plus ``keys``."""
    return plan(
        history='admissions = "ward.csv"\nepisodes = "episodes.csv"\n'
        f'timestamp_format = "%d/%m/%Y %H:%M"\n{methods}{keys}{columns}'
    )


def changed(line: int, old: str, new: str) -> list[str]:
    """The export's rows with ``old`` replaced on file line ``line``."""
    rows = list(ROWS)
    rows[line - 2] = rows[line - 2].replace(old, new)
    return rows


SPLIT_HEADER = "Ward,Adm Date,Adm Time,Disch Date,Disch Time"
SPLIT_COLUMNS = (
    '[history.columns]\nadmitted_date = "Adm Date"\nadmitted_time = "Adm Time"\n'
    'discharged_date = "Disch Date"\ndischarged_time = "Disch Time"\n'
)


def split(*rows: str) -> dict[str, str]:
    return {"ward.csv": GOOD, "episodes.csv": "\n".join([SPLIT_HEADER, *rows]) + "\n"}


def split_plan() -> str:
    return mapped('date_format = "%d/%m/%Y"\n', SPLIT_COLUMNS, "")


def book(**sheets: list[list]) -> bytes:
    return data.workbook(sheets)


SHEET = [["admitted_at", "discharged_at"], ["2026-01-01 08:00", None], ["yesterday", None]]
WORKBOOK_PLAN = plan(history='admissions = "ward.csv"\nepisodes = "episodes.xlsx"\n')
NEWEST_FIRST_GAP = (daily_rows()[:2] + daily_rows()[5:])[::-1]  # 117 rows, newest first
REPEATED = daily_rows()[::-1][:3] + daily_rows()[::-1][2:]  # the third day twice


def files(episodes: str | bytes | None = None, ward: str = GOOD) -> dict[str, str | bytes]:
    return {"ward.csv": ward, "episodes.csv": export() if episodes is None else episodes}


CASES = [
    Case("ward not in the file", ("history.ward: no row has ward 'Lrach' in column ward "
                                  "(2 found: Larch, Rowan); did you mean 'Larch'?",),
         files(), mapped('ward = "Lrach"\n'), "episodes.csv"),
    Case("a listed ward not in the file", ("no row has ward 'Rowen'",), files(),
         mapped('ward = ["Larch", "Rowen"]\n'), "episodes.csv"),
    Case("ward filter without a ward column", ("line 1: no ward column for history.ward",),
         files(export([r.replace(";Larch", "").replace(";Rowan", "") for r in ROWS],
                      HEADER.replace(";Ward", ""))),
         mapped(columns=COLUMNS.replace('ward = "Ward"\n', "")), "episodes.csv"),
    Case("specialty filter without a specialty column",
         ("line 1: no specialty column for history.specialty",),
         files(export([r.replace(";General Medicine", "").replace(";Care of Older People", "")
                       for r in ROWS], HEADER.replace(";Specialty", ""))),
         mapped('ward = "Larch"\nspecialty = "General Medicine"\n'), "episodes.csv"),
    Case("filters that leave no row", ("no row has ward Larch and specialty Care of Older",),
         files(), mapped('ward = "Larch"\nspecialty = "Care of Older People"\n'), "episodes.csv"),
    Case("ward filter on a daily file without a ward column",
         ("line 1: no ward column for history.ward",), files(), mapped(), "ward.csv"),
    Case("daily file keeps several wards", ("history.ward keeps 2 ward values (Larch, Rowan) of a "
                                            "daily counts file",),
         files(ward=daily([f"{row},{w}" for row in daily_rows() for w in ("Larch", "Rowan")],
                          "date,admissions,ward")),
         mapped('ward = ["Larch", "Rowan"]\n'), "ward.csv"),
    Case("unknown admission method", ("line 4: Admission Method (method) 'Transfer' is in "
                                      "neither history.planned_methods nor",
                                      "values not listed: 'Transfer'"),
         files(export(changed(4, "A&E", "Transfer"))), mapped(), "episodes.csv"),
    Case("empty admission method", ("line 2: Admission Method (method) '' is in neither",),
         files(export(changed(2, "Emergency", ""))), mapped(), "episodes.csv"),
    Case("method column mapped without its values", ("history.columns.method: say what its "
                                                     "values mean",),
         files(), mapped(methods=""), "plan.toml"),
    Case("a method both planned and emergency", ("history.emergency_methods: 'elective' is "
                                                 "also in history.planned_methods",),
         files(), mapped(methods='planned_methods = ["Elective"]\nemergency_methods = '
                                 '["elective"]\n'), "plan.toml"),
    Case("method lists without a method column", ("line 1: no method column for "
                                                  "history.planned_methods",),
         files(), mapped(columns=COLUMNS.replace('method = "Admission Method"\n', "")),
         "episodes.csv"),
    Case("mapped column not in the file", ("line 1: no column 'Adm Date' "
                                           "(history.columns.admitted_at)",),
         files(), mapped(columns=COLUMNS.replace('"Admission Date"', '"Adm Date"')),
         "episodes.csv"),
    Case("two fields on one column", ("history.columns.discharged_at: column 'Admission Date' "
                                      "is also mapped to history.columns.admitted_at",),
         files(), mapped(columns=COLUMNS.replace('"Discharge Date"', '"Admission Date"')),
         "plan.toml"),
    Case("date column without its time column", ("history.columns.admitted_date: give "
                                                 "history.columns.admitted_time too",),
         files(), mapped(columns=SPLIT_COLUMNS.replace('admitted_time = "Adm Time"\n', "")),
         "plan.toml"),
    Case("one column and separate columns", ("give either admitted_at or admitted_date with "
                                             "admitted_time, not both",),
         files(), mapped(columns=SPLIT_COLUMNS + 'admitted_at = "Admission Date"\n'),
         "plan.toml"),
    Case("unknown field in the mapping", ("history.columns.admited_at: unknown key (did you "
                                          "mean 'admitted_at'?)",),
         files(), mapped(columns='[history.columns]\nadmited_at = "Admission Date"\n'),
         "plan.toml"),
    Case("column named twice in the header", ("line 1: column 'Ward' appears 2 times",),
         files(export(header=HEADER.replace("Specialty", "Ward"))), mapped(), "episodes.csv"),
    Case("bad time of day", ("line 3: Adm Time (admitted_time) '25:10' is not a time of day",),
         split("Larch,01/01/2026,08:00,,", "Larch,01/01/2026,25:10,,"), split_plan(),
         "episodes.csv"),
    Case("discharge date without its time", ("line 3: Disch Time (discharged_time) is empty",),
         split("Larch,01/01/2026,08:00,,", "Larch,01/01/2026,09:00,02/01/2026,"), split_plan(),
         "episodes.csv"),
    Case("bad date in a mapped column", ("line 4: Admission Date (admitted_at) '31/02/2026 "
                                         "10:00' does not match history.timestamp_format",),
         files(export(changed(4, "02/01/2026", "31/02/2026"))), mapped(), "episodes.csv"),
    Case("empty discharge not listed as still on the ward",
         ("line 4: Discharge Date (discharged_at) is empty, and history.still_on_ward does not "
          'list ""',),
         files(export(changed(4, "NULL", ""))),
         mapped('ward = "Larch"\nstill_on_ward = ["NULL"]\n'), "episodes.csv"),
    Case("still-on-ward token replaced", ("line 4: Discharge Date (discharged_at) 'NULL' does "
                                          "not match",),
         files(), mapped('ward = "Larch"\nstill_on_ward = ["", "in"]\n'), "episodes.csv"),
    Case("declared encoding not met", ("line 3: byte 0xe9 is not utf-8 text (history.encoding = "
                                       "'utf-8')",),
         files(export(changed(3, "Rowan", "Ros\xe9")).encode("cp1252")),
         mapped('ward = "Larch"\nencoding = "utf-8"\n'), "episodes.csv"),
    Case("unknown encoding", ("history.encoding: must be a text encoding",), files(),
         mapped('encoding = "klingon"\n'), "plan.toml"),
    Case("newest first with days missing", ("line 116: days missing from 2026-01-03 to "
                                            "2026-01-05",),
         {"ward.csv": daily(NEWEST_FIRST_GAP)}),
    Case("newest first with a repeated day", ("line 5: date 2026-04-28 appears twice (also on "
                                              "line 4)",),
         {"ward.csv": daily(REPEATED)}),
    Case("sheet not in the workbook", ("no sheet named 'Larch' (sheets: 'Episodes')",),
         {"ward.csv": GOOD, "episodes.xlsx": book(Episodes=SHEET)},
         plan(history='admissions = "ward.csv"\nepisodes = "episodes.xlsx"\n'
                      'episodes_sheet = "Larch"\n'), "episodes.xlsx"),
    Case("several sheets, none named", ("the workbook has 2 sheets ('Notes', 'Episodes'); name "
                                        "the one to read",),
         {"ward.csv": GOOD, "episodes.xlsx": book(Notes=[["x"]], Episodes=SHEET)},
         WORKBOOK_PLAN, "episodes.xlsx"),
    Case("sheet number past the last", ("sheet 3 asked for, but the workbook has 1",),
         {"ward.csv": GOOD, "episodes.xlsx": book(Episodes=SHEET)},
         plan(history='admissions = "ward.csv"\nepisodes = "episodes.xlsx"\nepisodes_sheet = 3\n'),
         "episodes.xlsx"),
    Case("sheet number zero", ("history.episodes_sheet: must be a sheet name, or its number",),
         {"ward.csv": GOOD}, plan(history='admissions = "ward.csv"\nepisodes_sheet = 0\n'),
         "plan.toml"),
    Case("bad cell in a workbook", ("episodes.xlsx: sheet 'Episodes', row 3: admitted_at "
                                    "'yesterday' is not a date",),
         {"ward.csv": GOOD, "episodes.xlsx": book(Episodes=SHEET)}, WORKBOOK_PLAN,
         "episodes.xlsx"),
    Case("bad count in a workbook", ("ward.xlsx: sheet 'Counts', row 3: admissions '2.5' is not"
                                     " a non-negative whole number",),
         {"ward.xlsx": book(Counts=[["date", "admissions"], ["2026-01-01", 3],
                                    ["2026-01-02", 2.5]])},
         plan(history='admissions = "ward.xlsx"\n'), "ward.xlsx"),
    Case("missing column in a workbook", ("sheet 'Counts', row 1: missing column(s) admissions",),
         {"ward.xlsx": book(Counts=[["date", "count"], ["2026-01-01", 3]])},
         plan(history='admissions = "ward.xlsx"\n'), "ward.xlsx"),
    Case("not a workbook", ("cannot be read as an .xlsx workbook",),
         {"ward.xlsx": GOOD}, plan(history='admissions = "ward.xlsx"\n'), "ward.xlsx"),
    Case("old Excel workbook", ("is an Excel 97-2003 workbook (.xls); save it as .xlsx",),
         {"ward.xls": b"\xd0\xcf\x11\xe0"}, plan(history='admissions = "ward.xls"\n'), "ward.xls"),
]  # fmt: skip


@pytest.mark.parametrize("case", CASES, ids=[case.name for case in CASES])
def test_export_refusals_check_and_run(tmp_path, case):
    given = write_case(tmp_path / "ward", case)
    named = str(tmp_path / "ward" / case.names)
    for argv in (["check", str(given)], ["run", str(given), "--paths", "20", "--out"]):
        if argv[0] == "run":
            argv = [*argv, str(tmp_path / "out" / "run")]
        result = CliRunner().invoke(cli, argv)
        assert_one_line_error(result, *case.expect)
        assert named in result.output, result.output
        assert not (tmp_path / "out").exists(), "no output folder may be made"


def test_the_mapped_export_is_accepted(tmp_path):
    """The plan the refusals start from reads: Larch's rows, Rowan's left out."""
    rows = [*ROWS, "KV4;Larch;General Medicine;Elective;29/04/2026 10:00;NULL"]
    larch = daily([f"{row},Larch" for row in daily_rows()], "date,admissions,ward")
    case = Case("good", (), files(export(rows), larch), mapped())
    result = CliRunner().invoke(cli, ["check", str(write_case(tmp_path, case))])
    assert result.exit_code == 0, result.output
    assert "episodes: 3 (2 emergency, 1 planned), 2 on the ward at the start" in result.output
    assert "episodes.csv: 3 of 4 rows read (ward Larch)" in result.output
    assert "ward.csv: 120 of 120 rows read (ward Larch)" in result.output

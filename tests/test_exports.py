"""Exports read as they come: a mapped, filtered export (CSV, separate date and time
columns, or .xlsx) gives exactly the episodes and daily counts of the same data in the
standard layout; the admission method is carried; newest-first daily files are read in date
order and ``planner check`` says what reading did."""

from __future__ import annotations

import export_data as data
import pandas as pd
import pytest
from click.testing import CliRunner
from wards import ROTA

from planner.cli import cli
from planner.errors import PlannerError
from planner.records.files import HistoryFormat, read_daily_admissions, read_episodes

LARCH = HistoryFormat(
    timestamp_format=data.DAY_FIRST,
    wards=("Larch",),
    planned_methods=("Elective",),
    emergency_methods=("Emergency", "A&E"),
    columns=(
        ("admitted_at", "Admission Date"),
        ("discharged_at", "Discharge Date"),
        ("ward", "Ward"),
        ("method", "Admission Method"),
        ("patient", "Patient ID"),
    ),
)


def write(folder, name, content) -> str:
    path = folder / name
    if isinstance(content, bytes):
        path.write_bytes(content)
    else:
        path.write_text(content)
    return path


@pytest.fixture
def standard(tmp_path) -> pd.DataFrame:
    return read_episodes(write(tmp_path, "standard.csv", data.standard_csv()))


def test_mapped_export_gives_the_standard_episodes(tmp_path, standard):
    mapped = read_episodes(write(tmp_path, "hospital.csv", data.hospital_csv()), LARCH)
    pd.testing.assert_frame_equal(mapped.drop(columns="method"), standard)
    # The method column is carried, from the export's own values (counted independently).
    table = data.episodes()
    larch = table[table["ward"] == "Larch"].sort_values("admitted_at", kind="stable")
    expected = larch["method"].map({"Emergency": "emergency", "A&E": "emergency"})
    assert mapped["method"].tolist() == expected.fillna("planned").tolist()
    assert set(mapped["method"]) == {"planned", "emergency"}
    assert mapped.attrs["notes"] == (
        f"{tmp_path / 'hospital.csv'}: {len(larch)} of {len(table)} rows read (ward Larch)",
    )


def test_separate_date_and_time_columns_give_the_standard_episodes(tmp_path, standard):
    form = HistoryFormat(
        date_format="%d/%m/%Y",
        wards=("larch",),  # any case
        columns=(
            ("admitted_date", "Adm Date"),
            ("admitted_time", "Adm Time"),
            ("discharged_date", "Disch Date"),
            ("discharged_time", "Disch Time"),
        ),
    )
    split = read_episodes(write(tmp_path, "split.csv", data.split_csv()), form)
    pd.testing.assert_frame_equal(split, standard)


def test_workbook_gives_the_standard_episodes(tmp_path, standard):
    book = data.workbook(
        {"Notes": [["exported by the ward system"]], "Episodes": data.hospital_rows()}
    )
    path = write(tmp_path, "hospital.xlsx", book)
    for sheet in ("Episodes", "episodes", 2):
        for fmt in (data.DAY_FIRST, None):  # date cells need no declared format
            keys = {**LARCH.__dict__, "episodes_sheet": sheet, "timestamp_format": fmt}
            mapped = read_episodes(path, HistoryFormat(**keys))
            pd.testing.assert_frame_equal(mapped.drop(columns="method"), standard)
    # Dates typed as text in a workbook read as in a CSV file.
    text_rows = [data.HEADER] + [
        [
            *row[:4],
            f"{row[4]:%d/%m/%Y %H:%M}",
            "NULL" if row[5] is None else f"{row[5]:%d/%m/%Y %H:%M}",
            None,
        ]
        for row in data.hospital_rows()[1:]
    ]
    typed = read_episodes(write(tmp_path, "text.xlsx", data.workbook({"Sheet": text_rows})), LARCH)
    pd.testing.assert_frame_equal(typed.drop(columns="method"), standard)


def test_daily_counts_filtered_and_newest_first_read_in_date_order(tmp_path):
    form = HistoryFormat(
        date_format="%d/%m/%Y",
        wards=("Larch",),
        columns=(("date", "Day"), ("admissions", "Admitted")),
    )
    path = write(tmp_path, "daily.csv", data.hospital_daily_csv())
    series = read_daily_admissions(path, form)
    expected = data.daily_counts("Larch").astype("int64")
    pd.testing.assert_series_equal(series, expected, check_freq=False)
    assert series.index.freqstr == "D"
    assert series.attrs["notes"] == (
        f"{path}: 70 of 140 rows read (ward Larch)",
        f"{path}: rows run newest first; read in date order",
    )
    # The same counts from a workbook of one sheet, oldest first, with whole numbers as 3.0.
    rows = [["Day", "Ward", "Admitted"]] + [
        [day.to_pydatetime(), "Larch", float(count)] for day, count in expected.items()
    ]
    book = read_daily_admissions(
        write(tmp_path, "daily.xlsx", data.workbook({"Counts": rows})), form
    )
    pd.testing.assert_series_equal(book, expected, check_freq=False)
    assert book.attrs["notes"] == (
        f"{tmp_path / 'daily.xlsx'}: sheet 'Counts': 70 of 70 rows read (ward Larch)",
    )


def test_line_numbers_are_the_files_after_filtering(tmp_path):
    """A bad Larch row is named by its own line in the file; a bad row of another ward is
    not read at all."""
    lines = data.hospital_csv().splitlines()
    rowan = next(i for i, line in enumerate(lines) if ";Rowan;" in line)
    larch = max(i for i, line in enumerate(lines) if ";Larch;" in line)
    lines[rowan] = lines[rowan].replace("/2026 ", "/2026 x", 1)  # unreadable, but not read
    path = write(tmp_path, "hospital.csv", "\n".join(lines) + "\n")
    assert len(read_episodes(path, LARCH)) == 312
    lines[larch] = lines[larch].replace(";Emergency;", ";Transfer;").replace(";A&E;", ";Transfer;")
    lines[larch] = lines[larch].replace(";Elective;", ";Transfer;")
    path = write(tmp_path, "hospital.csv", "\n".join(lines) + "\n")
    with pytest.raises(PlannerError) as error:
        read_episodes(path, LARCH)
    assert str(error.value).startswith(
        f"{path}: line {larch + 1}: Admission Method (method) 'Transfer' is in neither "
        "history.planned_methods nor history.emergency_methods"
    )


def test_quoted_line_breaks_keep_line_numbers(tmp_path):
    text = 'admitted_at,discharged_at,note\n2026-01-01 08:00,,"two\nlines"\n2026-01-02,bad,\n'
    with pytest.raises(PlannerError, match=r"line 4: discharged_at 'bad' is not a date"):
        read_episodes(write(tmp_path, "e.csv", text))


def test_still_on_ward_tokens_are_configurable(tmp_path):
    text = (
        "admitted_at,discharged_at\n2026-01-01 08:00,Still in\n2026-01-01 09:00,2026-01-02 10:00\n"
    )
    path = write(tmp_path, "e.csv", text)
    form = HistoryFormat(still_on_ward=("still in",))
    episodes = read_episodes(path, form)
    assert episodes["discharged_at"].isna().tolist() == [True, False]
    with pytest.raises(PlannerError, match="line 2: discharged_at 'Still in' is not a date"):
        read_episodes(path)


def test_declared_encoding(tmp_path):
    text = "admitted_at,discharged_at,note\n2026-01-01 08:00,,caf\u00e9\n"
    path = write(tmp_path, "e.csv", text.encode("utf-16"))
    assert len(read_episodes(path, HistoryFormat(encoding="utf-16"))) == 1
    path = write(tmp_path, "l.csv", text.encode("latin-1"))
    assert len(read_episodes(path, HistoryFormat(encoding="latin-1"))) == 1


def export_plan(tmp_path, extra: str = "", episodes: str = "hospital.csv") -> str:
    (tmp_path / "hospital.csv").write_text(data.hospital_csv())
    (tmp_path / "daily.csv").write_text(data.hospital_daily_csv())
    plan = tmp_path / "plan.toml"
    plan.write_text(
        "name = 'Larch from the hospital export'\nhorizon_weeks = 2\npaths = 20\nseed = 5\n"
        f'[history]\nepisodes = "{episodes}"\n{extra}{data.MAPPING}'
        "[forecast]\nstrategy = 'recursive'\nmax_lag = 7\nannual = false\n[beds]\nbase = 28\n"
        + ROTA
    )
    return str(plan)


def test_check_reports_what_reading_did(tmp_path):
    result = CliRunner().invoke(cli, ["check", export_plan(tmp_path)])
    assert result.exit_code == 0, result.output
    table = data.episodes()
    larch = table[table["ward"] == "Larch"]
    emergencies = larch["method"].isin(["Emergency", "A&E"]).sum()
    assert f"episodes: 312 ({emergencies} emergency, {312 - emergencies} planned)" in result.output
    assert (
        f"{tmp_path / 'hospital.csv'}: 312 of {len(table)} rows read (ward Larch)" in result.output
    )
    daily = 'admissions = "daily.csv"\ndate_format = "%d/%m/%Y"\n'
    mapping = '\ndate = "Day"\nadmissions = "Admitted"\n'
    plan = export_plan(tmp_path, daily)
    (tmp_path / "plan.toml").write_text(
        (tmp_path / "plan.toml")
        .read_text()
        .replace('patient = "Patient ID"\n', 'patient = "Patient ID"' + mapping)
    )
    result = CliRunner().invoke(cli, ["check", plan])
    assert result.exit_code == 0, result.output
    assert f"{tmp_path / 'daily.csv'}: rows run newest first; read in date order" in result.output
    assert "history: 70 days, 2026-01-05 to 2026-03-15" in result.output


def test_the_whole_export_without_a_ward_is_refused_and_the_ward_filter_reads_it(tmp_path):
    plan = export_plan(tmp_path)
    (tmp_path / "plan.toml").write_text(
        (tmp_path / "plan.toml").read_text().replace('ward = "Larch"\n', "", 1)
    )
    result = CliRunner().invoke(cli, ["check", plan])
    assert result.exit_code == 2
    assert "hospital.csv: column ward names 2 wards (Larch, Rowan)" in result.output
    assert "history.ward" in result.output


def test_hindcast_key_follows_the_ward_read(tmp_path):
    from planner.fingerprint import scenario_key
    from planner.scenario import load_scenario

    larch = scenario_key(load_scenario(export_plan(tmp_path)))
    text = (tmp_path / "plan.toml").read_text().replace('ward = "Larch"', 'ward = "Rowan"', 1)
    (tmp_path / "plan.toml").write_text(text)
    assert scenario_key(load_scenario(tmp_path / "plan.toml")) != larch


def test_an_episode_field_and_a_daily_field_may_share_a_column_name(tmp_path):
    from planner.scenario import load_scenario

    plan = export_plan(tmp_path)
    text = (tmp_path / "plan.toml").read_text()
    extra = 'patient = "Patient ID"\ndate = "Admission Date"\n'
    (tmp_path / "plan.toml").write_text(text.replace('patient = "Patient ID"\n', extra))
    form = load_scenario(plan).history_format
    assert form.column("date") == form.column("admitted_at") == "Admission Date"


def test_a_workbook_with_the_header_below_row_1_is_refused_naming_row_1(tmp_path):
    from openpyxl import Workbook

    book = Workbook()
    book.active.title = "Export"
    book.active["A3"], book.active["B3"] = "admitted_at", "discharged_at"
    book.active["A4"] = "2026-01-01 08:00"
    book.save(tmp_path / "e.xlsx")
    with pytest.raises(PlannerError) as error:
        read_episodes(tmp_path / "e.xlsx")
    assert str(error.value) == (
        f"{tmp_path / 'e.xlsx'}: sheet 'Export', row 1: is empty; the header belongs in row 1"
    )


def test_specialty_filter_gives_that_specialtys_episodes(tmp_path):
    """Rowan is the only ward of Care of Older People: the specialty filter reads its rows."""
    form = HistoryFormat(
        timestamp_format=data.DAY_FIRST,
        specialties=("care of older people",),
        wards=("Rowan",),
        columns=(
            ("admitted_at", "Admission Date"),
            ("discharged_at", "Discharge Date"),
            ("specialty", "Specialty"),
        ),
    )
    rowan = read_episodes(write(tmp_path, "hospital.csv", data.hospital_csv()), form)
    standard = read_episodes(write(tmp_path, "rowan.csv", data.standard_csv("Rowan")))
    pd.testing.assert_frame_equal(rowan, standard)
    assert "(ward Rowan; specialty care of older people)" in rowan.attrs["notes"][0]

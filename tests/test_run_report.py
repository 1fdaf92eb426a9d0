"""The run report's first screen and its tables by shift and weekday, on the demo ward (four
weeks, the recursive strategy: no backtest) through the command line."""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner
from wards import demo_without_sizing

from planner.cli import cli
from planner.report.assumptions import clock

DEMO = Path(__file__).resolve().parents[1] / "scenarios"


def _plan(folder: Path, extra: str = "") -> Path:
    """The demo's baseline without its [sizing] table (so the first screen points to
    `planner size`), four weeks, ``extra`` tables added."""
    unsized = demo_without_sizing(folder)
    path = folder / "ward.toml"
    path.write_text(
        f'extends = "{unsized}"\nhorizon_weeks = 4\n[forecast]\nstrategy = "recursive"\n{extra}'
    )
    return path


@pytest.fixture(scope="module")
def report(tmp_path_factory):
    folder = tmp_path_factory.mktemp("report")
    out = folder / "out"
    result = CliRunner().invoke(
        cli, ["run", str(_plan(folder)), "--paths", "200", "--jobs", "1", "--out", str(out)]
    )
    assert result.exit_code == 0, result.output
    return out


def _text(page: str) -> str:
    return re.sub(r"\s+", " ", re.sub(r"<[^>]+>", " ", page))


def test_first_screen_answers_the_four_questions_before_any_table(report):
    page = (report / "report.html").read_text()
    weekly = pd.read_csv(report / "weekly.csv")
    first_table = page.index("<table")
    for question in ("Will the ward run short", "When?", "How badly?", "What would fix it?"):
        assert page.index(question) < first_table
    worst = weekly.loc[weekly["p_bed_shortfall"].idxmax()]
    named = pd.Timestamp(worst["week_start"]).strftime("%a %d %b %Y")
    text = _text(page[:first_table])
    assert f"week from {named}: {worst['p_bed_shortfall']:.0%}" in text
    # The most often short shift of shift_weekdays.csv is named on the first screen.
    shifts = pd.read_csv(report / "shift_weekdays.csv")
    top = shifts.loc[shifts["p_short"].idxmax()]
    assert f"the {top['shift']} shift on {top['weekday']}s ({top['p_short']:.0%}" in text
    assert "planner size ward.toml" in text and "planner compare ward.toml" in text


def test_the_shift_table_agrees_with_shifts_csv(report):
    # shift_weekdays.csv's chance for a shift and weekday is the mean over those days of
    # shifts.csv's p_short (each day's share of paths short): the mean over paths of each
    # path's share of days is the same number, counted the other way round.
    daily = pd.read_csv(report / "shifts.csv", parse_dates=["date"])
    daily = daily[daily["date"] >= pd.Timestamp(pd.read_csv(report / "weekly.csv").iloc[0, 0])]
    daily["weekday"] = daily["date"].dt.day_name()
    expected = daily.groupby(["shift", "weekday"])["p_short"].mean()
    table = pd.read_csv(report / "shift_weekdays.csv").set_index(["shift", "weekday"])
    pd.testing.assert_series_equal(
        table["p_short"].sort_index(), expected.sort_index(), check_names=False, atol=1e-9
    )


def test_shift_times_are_clock_times(report):
    page = (report / "report.html").read_text()
    assert "day 07:00-19:00" in page and "night 19:00-07:00" in page
    assert clock(7.5) == "07:30" and clock(15.5) == "15:30" and clock(24.0) == "00:00"
    assert not re.search(r"\d\d\.\d\d-\d\d\.\d\d h", page)


def test_sizing_answer_on_the_first_screen(tmp_path):
    out = tmp_path / "out"
    path = _plan(tmp_path, '[sizing]\nmeasure = "no_bed_share"\n')
    result = CliRunner().invoke(
        cli, ["run", str(path), "--paths", "200", "--jobs", "1", "--out", str(out)]
    )
    assert result.exit_code == 0, result.output
    page = (out / "report.html").read_text()
    first_table = page.index("<table")
    assert page.index("this ward needs") < first_table
    assert "sets no [sizing] target" not in page


def test_the_workbook_holds_the_csv_tables_with_units(report):
    import openpyxl

    book = openpyxl.load_workbook(report / "run.xlsx")
    assert book.sheetnames == ["about", "weekly", "daily", "shifts", "shift_weekdays"]
    assert "professional judgement" in book["about"]["B1"].value
    for name in book.sheetnames[1:]:
        csv = pd.read_csv(report / f"{name}.csv")
        sheet = book[name]
        header = [cell.value for cell in sheet[1]]
        units = [cell.value for cell in sheet[2]]
        assert header == list(csv.columns)
        assert all(units), (name, dict(zip(header, units, strict=True)))
        assert sheet.max_row == len(csv) + 2
        # The numbers are the CSV's (written to 6 significant digits there).
        numbers = [c for c in csv.columns if pd.api.types.is_numeric_dtype(csv[c])]
        for column in numbers:
            index = header.index(column) + 1
            values = [row[0].value for row in sheet.iter_rows(min_row=3, min_col=index,
                                                             max_col=index)]  # fmt: skip
            np.testing.assert_allclose(values, csv[column], rtol=1e-5, atol=1e-12)
    weekly_units = dict(zip([c.value for c in book["weekly"][1]],
                            [c.value for c in book["weekly"][2]], strict=True))  # fmt: skip
    assert "hours" in weekly_units["expected_wait_hours"]
    assert "in the week" in weekly_units["expected_wait_hours"]
    assert "standard error" in weekly_units["p_bed_shortfall_se"]

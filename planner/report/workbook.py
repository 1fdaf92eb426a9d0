"""Spreadsheet output: the tables of a run, a comparison or a sizing as one .xlsx workbook
beside the CSV files, one sheet per table, written with openpyxl.

Each sheet has the CSV file's column names in row 1 and each column's unit and period in
row 2 (the data start on row 3, frozen under the two header rows); a first sheet "about" says
what each sheet holds and carries the caution. The numbers are those of the CSV files, at full
precision; dates are spreadsheet dates.
"""

from __future__ import annotations

from datetime import date, datetime
from pathlib import Path

import numpy as np
import pandas as pd
from openpyxl import Workbook
from openpyxl.styles import Font

from planner.report.html import CAUTION

#: Units of columns named outright.
NAMED = {
    "date": "date",
    "week_start": "date (the week's first day)",
    "beds_open": "beds open",
    "beds": "beds",
    "days": "days",
    "nurses_rostered": "registered nurses",
    "nurses_needed": "registered nurses",
    "beds_needed": "beds",
    "beds_now": "beds",
    "occupancy_85_beds": "beds",
    "erlang_beds": "beds",
    "erlang_share": "share of patients (0-1)",
    "target": "as the measure: share (0-1) or hours",
    "risk": "as the measure: share (0-1) or hours",
    "risk_one_fewer": "as the measure: share (0-1) or hours",
    "risk_now": "as the measure: share (0-1) or hours",
    "within_one_se": "true / false",
    "admissions_per_day": "admissions per day (mean)",
    "mean_stay_days": "days",
    "offered_load": "occupied beds with unlimited beds (erlangs)",
    "expected_shortfall": "nurses missing, mean over paths",
}

#: Text columns: no unit.
TEXT = {"scenario", "shift", "weekday", "period", "measure", "pairing"}


def unit(column: str, period: str) -> str:
    """The unit of a table's column, with ``period`` ("per week", "per day", "per shift",
    "total over the horizon") where the column counts something over time."""
    if column in TEXT:
        return "text"
    if column.endswith("_se_independent"):
        return unit(column.removesuffix("_se_independent"), period) + "; 1 SE if independent"
    if column.endswith("_se"):
        return unit(column.removesuffix("_se"), period) + "; 1 standard error"
    if column.startswith("diff_"):
        return "this plan minus the first: " + unit(column.removeprefix("diff_"), period)
    if column in NAMED:
        return NAMED[column]
    if column.startswith(("census_p", "peak_occupancy_p", "peak_census_p")):
        return "occupied beds (patients), quantile across paths"
    if column.startswith("nurses_required_p"):
        return "registered nurses, quantile across paths"
    if column.startswith("p_"):
        return f"share of paths (0-1), {period}"
    if "cost_per" in column:
        return "currency of [costs] per one avoided"
    if "cost" in column:
        return "currency of [costs], total over the horizon"
    if "wait_hours" in column:
        return f"hours, all patients together, mean over paths, {period}"
    if "short_shifts" in column:
        return f"shifts, mean over paths, {period}"
    if column.startswith(("expected_", "shortfalls_")):
        return f"patients, mean over paths, {period}"
    return ""


def _cell(value):
    """A value openpyxl writes: numpy scalars as Python numbers, NaN as an empty cell."""
    if isinstance(value, np.generic):
        value = value.item()
    if isinstance(value, float) and np.isnan(value):
        return None
    if isinstance(value, pd.Timestamp):
        return value.to_pydatetime().date()
    return value


def _sheet(book: Workbook, name: str, frame: pd.DataFrame, period: str) -> None:
    sheet = book.create_sheet(name)
    sheet.append(list(frame.columns))
    sheet.append([unit(column, period) for column in frame.columns])
    for cell in sheet[1]:
        cell.font = Font(bold=True)
    for cell in sheet[2]:
        cell.font = Font(italic=True)
    dated = [c for c in frame.columns if c in ("date", "week_start")]
    for row in frame.itertuples(index=False):
        values = [_cell(v) for v in row]
        for index, column in enumerate(frame.columns):
            if column in dated and isinstance(values[index], str) and values[index]:
                values[index] = date.fromisoformat(values[index])
            elif column in dated and isinstance(values[index], datetime):
                values[index] = values[index].date()
        sheet.append(values)
    for index, column in enumerate(frame.columns):
        if column in dated:
            for (cell,) in sheet.iter_rows(min_row=3, min_col=index + 1, max_col=index + 1):
                cell.number_format = "yyyy-mm-dd"
    sheet.freeze_panes = "A3"


def write_workbook(sheets: dict[str, tuple[pd.DataFrame, str, str]], path: Path) -> None:
    """``sheets`` maps a sheet name to (table, period of its counts, what it holds) in order;
    written to ``path`` after an "about" sheet."""
    book = Workbook()
    about = book.active
    about.title = "about"
    about.append(["Caution", CAUTION])
    about.append(["Layout", "Row 1: column names (as in the CSV files); row 2: unit and period."])
    for name, (_, _, holds) in sheets.items():
        about.append([name, holds])
    about.column_dimensions["A"].width = 16
    about.column_dimensions["B"].width = 110
    for name, (frame, period, _) in sheets.items():
        _sheet(book, name, frame, period)
    book.save(path)

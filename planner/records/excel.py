"""Reading one sheet of an Excel workbook (.xlsx) as a history file's rows.

The header is row 1. Cells the workbook holds as dates or times are written as text in the
form the scenario declares for that field (``history.date_format``, ``history.timestamp_format``;
ISO without one), so that they read exactly as typed cells would; whole numbers stored as
decimals (3.0) are written as whole numbers. Rows are numbered as Excel shows them."""

from __future__ import annotations

from datetime import date, datetime, time
from pathlib import Path

import numpy as np
import pandas as pd

from planner.errors import PlannerError
from planner.records.form import HistoryFormat
from planner.records.mapping import Rows, Source, locate, rows_from_frame


def _formats(form: HistoryFormat) -> dict[str, str]:
    """The text form of a date or time cell, by field."""
    day = form.date_format or "%Y-%m-%d"
    moment = form.timestamp_format or "%Y-%m-%d %H:%M:%S"
    return {
        "date": day,
        "admitted_date": day,
        "discharged_date": day,
        "admitted_at": moment,
        "discharged_at": moment,
        "admitted_time": "%H:%M:%S",
        "discharged_time": "%H:%M:%S",
    }


def cell_text(value, fmt: str | None) -> str:
    """A cell's value as the text a CSV export would hold."""
    if value is None:
        return ""
    if isinstance(value, datetime | date | time):
        if fmt is None:
            return value.isoformat(sep=" ") if isinstance(value, datetime) else value.isoformat()
        if isinstance(value, time):
            return value.strftime(fmt if "%H" in fmt and "%d" not in fmt else "%H:%M:%S")
        return value.strftime(fmt)
    if isinstance(value, float) and value.is_integer():
        return str(int(value))
    return str(value)


def _sheet(workbook, path: Path, sheet: str | int | None):
    names = workbook.sheetnames
    listed = ", ".join(repr(name) for name in names)
    key = "history.episodes_sheet or history.admissions_sheet"
    if sheet is None:
        if len(names) > 1:
            raise PlannerError(
                f"{path}: the workbook has {len(names)} sheets ({listed}); name the one to read "
                f"with {key}"
            )
        return workbook[names[0]]
    if isinstance(sheet, int):
        if sheet > len(names):
            raise PlannerError(
                f"{path}: sheet {sheet} asked for, but the workbook has {len(names)} ({listed})"
            )
        return workbook[names[sheet - 1]]
    for name in names:
        if name.strip().lower() == sheet.strip().lower():
            return workbook[name]
    raise PlannerError(f"{path}: no sheet named {sheet!r} (sheets: {listed})")


def read_sheet_rows(path: Path, sheet: str | int | None, kind: str, form: HistoryFormat) -> Rows:
    """The fields of a workbook's sheet as text rows (``kind``: "episodes" or "daily")."""
    from openpyxl import load_workbook

    if not path.is_file():
        raise PlannerError(f"{path}: file not found")
    with path.open("rb") as handle:
        try:
            workbook = load_workbook(handle, read_only=True, data_only=True)
        except Exception as error:  # any failure here: not a workbook openpyxl can read
            reason = str(error).strip().splitlines()[0] if str(error).strip() else "unreadable"
            raise PlannerError(f"{path}: cannot be read as an .xlsx workbook ({reason})") from None
        try:
            return _sheet_rows(_sheet(workbook, path, sheet), path, kind, form)
        finally:
            workbook.close()


def _sheet_rows(chosen, path: Path, kind: str, form: HistoryFormat) -> Rows:
    source = Source(path, chosen.title)
    cells = chosen.iter_rows(min_row=1, min_col=1, values_only=True)
    first = next(cells, None)
    if first is None or all(value is None for value in first):
        raise PlannerError(f"{source.at(1)}: is empty; the header belongs in row 1")
    header = [cell_text(value, None) for value in first]
    positions = locate(source, header, kind, form)
    formats = _formats(form)
    wanted = sorted(set(positions.values()))
    by_position = {at: formats.get(name) for name, at in positions.items()}
    columns: dict[int, list[str]] = {at: [] for at in wanted}
    lines, blank = [], []
    for number, values in enumerate(cells, start=2):
        lines.append(number)
        blank.append(all(value is None or str(value).strip() == "" for value in values))
        for at in wanted:
            value = values[at] if at < len(values) else None
            columns[at].append(cell_text(value, by_position[at]))
    keep = ~np.asarray(blank, dtype=bool)
    frame = pd.DataFrame({at: np.asarray(columns[at], dtype=object)[keep] for at in wanted})
    lines = np.asarray(lines, dtype=np.int64)[keep]
    return rows_from_frame(source, frame, lines, header, positions, form)

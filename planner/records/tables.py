"""Reading a history file's table as it comes: CSV text in UTF-8 (with or without a
byte-order mark), Windows-1252 or a declared encoding, comma or semicolon separated, with
Windows line ends; or a sheet of an Excel workbook (:mod:`planner.records.excel`). The result
is the fields the ward needs, as text, with each row's line number in the file
(:class:`planner.records.mapping.Rows`)."""

from __future__ import annotations

import csv
import io
from pathlib import Path

import numpy as np
import pandas as pd

from planner.errors import PlannerError
from planner.records.form import HistoryFormat
from planner.records.mapping import Rows, Source, blank_rows, locate, rows_from_frame

WORKBOOK_SUFFIXES = (".xlsx", ".xlsm")


def _declared_text(path: Path, data: bytes, encoding: str) -> str:
    try:
        return data.decode(
            "utf-8-sig" if encoding.lower().replace("_", "-") == "utf-8" else encoding
        )
    except UnicodeDecodeError as error:
        line = data[: error.start].count(b"\n") + 1
        raise PlannerError(
            f"{path}: line {line}: byte {data[error.start]:#04x} is not {encoding} text "
            f"(history.encoding = {encoding!r}); correct the encoding or the file"
        ) from None


def file_text(path: Path, encoding: str | None = None) -> str:
    """The file's text (UTF-8, byte-order mark dropped, else Windows-1252, or as declared),
    refusing folders and binary data."""
    if path.is_dir():
        raise PlannerError(f"{path}: is a folder, not a CSV file")
    if not path.is_file():
        raise PlannerError(f"{path}: file not found")
    data = path.read_bytes()
    if encoding is not None:
        return _declared_text(path, data, encoding)
    if data[:2] in (b"\xff\xfe", b"\xfe\xff"):
        raise PlannerError(
            f'{path}: is UTF-16 text; save it as CSV in UTF-8, or set history.encoding = "utf-16"'
        )
    if b"\x00" in data[:65536]:
        raise PlannerError(f"{path}: is not a text file (binary data); give a CSV file")
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError as error:
        utf8_error = error
    try:  # an older Windows export: dates and counts read the same in either encoding
        return data.decode("cp1252")
    except UnicodeDecodeError as error:
        line = data[: error.start].count(b"\n") + 1
        first = data[: utf8_error.start].count(b"\n") + 1
        raise PlannerError(
            f"{path}: line {first}: byte {data[utf8_error.start]:#04x} is not UTF-8 text, and "
            f"byte {data[error.start]:#04x} on line {line} is not Windows-1252 either; save the "
            f"file as CSV in UTF-8, or declare history.encoding"
        ) from None


def _record_lines(text: str, separator: str, records: int) -> np.ndarray:
    """The line each data record starts on (header = line 1), counting lines inside quoted
    fields. Without quotes every record is one line."""
    if '"' not in text:
        return np.arange(records, dtype=np.int64) + 2
    reader = csv.reader(io.StringIO(text), delimiter=separator, skipinitialspace=True)
    next(reader)
    starts, end = [], reader.line_num
    for _ in reader:
        starts.append(end + 1)
        end = reader.line_num
    if len(starts) != records:  # cannot happen for a file pandas read; keep a plain count
        return np.arange(records, dtype=np.int64) + 2
    return np.asarray(starts, dtype=np.int64)


def read_csv_rows(path: Path, kind: str, form: HistoryFormat) -> Rows:
    """The fields of a CSV file of ``kind`` ("episodes" or "daily") as text rows."""
    text = file_text(path, form.encoding)
    if not text.strip():
        raise PlannerError(f"{path}: the file is empty")
    head = text.split("\n", 1)[0]
    separator = ";" if head.count(";") > head.count(",") else ","
    header = next(csv.reader(io.StringIO(text), delimiter=separator, skipinitialspace=True))
    try:
        frame = pd.read_csv(
            io.StringIO(text),
            sep=separator,
            dtype=str,
            keep_default_na=False,
            skipinitialspace=True,
            skip_blank_lines=False,
        )
    except (pd.errors.ParserError, csv.Error) as error:
        reason = str(error).strip().splitlines()[-1]
        raise PlannerError(f"{path}: cannot be read as CSV ({reason})") from None
    if frame.shape[1] != len(header):  # pandas and csv disagree on the header: never guess
        raise PlannerError(f"{path}: line 1: the header cannot be read as CSV")
    source = Source(path)
    positions = locate(source, header, kind, form)
    frame.columns = range(len(header))
    lines = _record_lines(text, separator, len(frame))
    blank = blank_rows(frame)
    return rows_from_frame(source, frame[~blank], lines[~blank], header, positions, form)


def read_rows(path: Path, kind: str, form: HistoryFormat) -> Rows:
    """The fields of a history file of ``kind`` ("episodes" or "daily") as text rows: a
    workbook (.xlsx) by its sheet, else CSV text."""
    path = Path(path)
    suffix = path.suffix.lower()
    if suffix == ".xls":
        raise PlannerError(
            f"{path}: is an Excel 97-2003 workbook (.xls); save it as .xlsx or as CSV"
        )
    if suffix in WORKBOOK_SUFFIXES:
        from planner.records.excel import read_sheet_rows

        sheet = form.episodes_sheet if kind == "episodes" else form.admissions_sheet
        return read_sheet_rows(path, sheet, kind, form)
    return read_csv_rows(path, kind, form)

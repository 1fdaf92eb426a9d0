"""Reading a bookings file: planned patients booked for a date and time, optionally with the
stay the booking expects.

Layout (CSV, comma or semicolon separated, UTF-8): a header with ``date`` (YYYY-MM-DD) and
``time`` (HH:MM) and optionally ``expected_stay`` (days, > 0; empty for none), one row per
booked patient, in any order. Every problem is refused with the file, the line and the column.
"""

from __future__ import annotations

import csv
import io
import math
import re
from datetime import datetime
from pathlib import Path

import pandas as pd

from planner.errors import PlannerError

REQUIRED = ("date", "time")
OPTIONAL = ("expected_stay",)
_TIME = re.compile(r"^([01]?\d|2[0-3]):([0-5]\d)$")


def read_bookings(path: str | Path) -> pd.DataFrame:
    """The bookings of ``path``: columns ``at`` (Timestamp of the admission) and
    ``expected_stay`` (days, NaN where not given), in order of time."""
    path = Path(path)
    if not path.is_file():
        raise PlannerError(f"{path}: bookings file not found")
    try:
        text = path.read_text(encoding="utf-8-sig")
    except UnicodeDecodeError:
        raise PlannerError(f"{path}: not a UTF-8 text file") from None
    if not text.strip():
        raise PlannerError(f"{path}: the file is empty")
    head = text.split("\n", 1)[0]
    reader = csv.reader(
        io.StringIO(text), delimiter=";" if head.count(";") > head.count(",") else ","
    )
    header = [name.strip().lower() for name in next(reader)]
    missing = [name for name in REQUIRED if name not in header]
    if missing:
        raise PlannerError(
            f"{path}: line 1: missing column(s) {', '.join(missing)} (expected header: "
            f"date,time or date,time,expected_stay)"
        )
    where = {name: header.index(name) for name in (*REQUIRED, *OPTIONAL) if name in header}
    times, stays = [], []
    for row in reader:
        line = reader.line_num
        if not any(cell.strip() for cell in row):
            continue
        if len(row) != len(header):
            raise PlannerError(
                f"{path}: line {line}: {len(row)} fields, the header has {len(header)}"
            )
        times.append(_moment(path, line, row[where["date"]].strip(), row[where["time"]].strip()))
        stays.append(
            _stay(path, line, row[where["expected_stay"]].strip())
            if "expected_stay" in where
            else math.nan
        )
    if not times:
        raise PlannerError(f"{path}: no bookings below the header")
    table = pd.DataFrame({"at": pd.to_datetime(times), "expected_stay": stays})
    return table.sort_values("at", kind="stable").reset_index(drop=True)


def _moment(path: Path, line: int, day: str, time: str) -> datetime:
    try:
        date = datetime.strptime(day, "%Y-%m-%d")
    except ValueError:
        raise PlannerError(
            f"{path}: line {line}: date {day!r} is not a date in the form YYYY-MM-DD"
        ) from None
    match = _TIME.match(time)
    if not match:
        raise PlannerError(f"{path}: line {line}: time {time!r} is not a time in the form HH:MM")
    return date.replace(hour=int(match.group(1)), minute=int(match.group(2)))


def _stay(path: Path, line: int, text: str) -> float:
    if not text:
        return math.nan
    try:
        value = float(text)
    except ValueError:
        value = math.nan
    if not math.isfinite(value) or value <= 0:
        raise PlannerError(
            f"{path}: line {line}: expected_stay {text!r} is not a number of days > 0"
        )
    return value

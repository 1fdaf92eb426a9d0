"""An invented hospital export for the tests of reading exports as they come: two wards of
the fictional Kestrel Vale District Hospital (Larch and Rowan) in one episode file with a
patient id, ward, specialty and admission method, day-first timestamps and NULL for patients
still on the ward; the same Larch episodes in the standard layout; daily counts of both
wards. Drawn once from a fixed seed."""

from __future__ import annotations

import io

import numpy as np
import pandas as pd

FIRST_DAY = pd.Timestamp("2026-01-05")
DAYS = 70
END = FIRST_DAY + pd.Timedelta(days=DAYS)  # 00:00 after the last day: later discharges unknown
WARDS = {"Larch": ("General Medicine", 4.0), "Rowan": ("Care of Older People", 3.0)}
#: The export's method values: the first two are emergencies, the third planned.
METHODS = ("Emergency", "A&E", "Elective")
HEADER = [
    "Patient ID",
    "Ward",
    "Specialty",
    "Admission Method",
    "Admission Date",
    "Discharge Date",
    "Notes",
]
DAY_FIRST = "%d/%m/%Y %H:%M"


def episodes() -> pd.DataFrame:
    """Both wards' episodes, in the order an export might list them (by patient id)."""
    rng = np.random.default_rng(1405)
    parts = []
    for ward, (specialty, per_day) in WARDS.items():
        counts = rng.poisson(per_day, DAYS)
        day = np.repeat(np.arange(DAYS), counts)
        admitted = FIRST_DAY + pd.to_timedelta(day * 1440 + rng.integers(0, 1440, day.size), "min")
        stay = pd.to_timedelta(rng.integers(90, 6 * 1440, day.size), unit="min")
        discharged = pd.Series(admitted + stay).where(admitted + stay < END)
        method = rng.choice(METHODS, size=day.size, p=[0.5, 0.3, 0.2])
        parts.append(
            pd.DataFrame(
                {
                    "ward": ward,
                    "specialty": specialty,
                    "method": method,
                    "admitted_at": admitted,
                    "discharged_at": discharged,
                }
            )
        )
    table = pd.concat(parts, ignore_index=True)
    table = table.sample(frac=1.0, random_state=7).reset_index(drop=True)
    table.insert(0, "patient", [f"KV{100000 + 37 * i}" for i in range(len(table))])
    return table


def hospital_csv(table: pd.DataFrame | None = None) -> str:
    """The whole-hospital export: semicolons, day-first times, NULL for no discharge, and a
    free-text column."""
    table = episodes() if table is None else table
    lines = [";".join(HEADER)]
    for row in table.itertuples():
        left = "NULL" if pd.isna(row.discharged_at) else row.discharged_at.strftime(DAY_FIRST)
        lines.append(
            f"{row.patient};{row.ward};{row.specialty};{row.method};"
            f"{row.admitted_at.strftime(DAY_FIRST)};{left};"
        )
    return "\r\n".join(lines) + "\r\n"


def standard_csv(ward: str = "Larch") -> str:
    """One ward's episodes in the tool's own layout (ISO times, empty = still on the ward)."""
    table = episodes()
    table = table[table["ward"] == ward]
    lines = ["admitted_at,discharged_at"]
    for row in table.itertuples():
        left = "" if pd.isna(row.discharged_at) else f"{row.discharged_at:%Y-%m-%d %H:%M}"
        lines.append(f"{row.admitted_at:%Y-%m-%d %H:%M},{left}")
    return "\n".join(lines) + "\n"


def split_csv() -> str:
    """The export with separate date and time columns (still on the ward: empty date)."""
    lines = ["Ward,Adm Date,Adm Time,Disch Date,Disch Time,Method"]
    for row in episodes().itertuples():
        gone = pd.notna(row.discharged_at)
        left = f"{row.discharged_at:%d/%m/%Y},{row.discharged_at:%H:%M}" if gone else ","
        lines.append(
            f"{row.ward},{row.admitted_at:%d/%m/%Y},{row.admitted_at:%H:%M},{left},{row.method}"
        )
    return "\n".join(lines) + "\n"


def daily_counts(ward: str) -> pd.Series:
    """Admissions per day of one ward (every day of the history)."""
    table = episodes()
    days = table.loc[table["ward"] == ward, "admitted_at"].dt.normalize()
    index = pd.date_range(FIRST_DAY, periods=DAYS, freq="D", name="date")
    return days.value_counts().reindex(index, fill_value=0).rename("admissions")


def hospital_daily_csv() -> str:
    """Both wards' daily counts in one file, newest day first, as some systems list them."""
    lines = ["Day,Ward,Admitted"]
    counts = {ward: daily_counts(ward) for ward in WARDS}
    for day in reversed(counts["Larch"].index):
        for ward, series in counts.items():
            lines.append(f"{day:%d/%m/%Y},{ward},{series[day]}")
    return "\n".join(lines) + "\n"


def workbook(sheets: dict[str, list[list]]) -> bytes:
    """An .xlsx workbook (openpyxl) of the given sheets, each a list of rows."""
    from openpyxl import Workbook

    book = Workbook()
    book.remove(book.active)
    for name, rows in sheets.items():
        sheet = book.create_sheet(name)
        for row in rows:
            sheet.append(row)
    buffer = io.BytesIO()
    book.save(buffer)
    return buffer.getvalue()


def hospital_rows(table: pd.DataFrame | None = None) -> list[list]:
    """The export as workbook rows: real date cells, None for no discharge."""
    table = episodes() if table is None else table
    rows: list[list] = [HEADER]
    for row in table.itertuples():
        left = None if pd.isna(row.discharged_at) else row.discharged_at.to_pydatetime()
        admitted = row.admitted_at.to_pydatetime()
        rows.append([row.patient, row.ward, row.specialty, row.method, admitted, left, None])
    return rows


#: The [history] keys that read the export for Larch.
MAPPING = """\
timestamp_format = "%d/%m/%Y %H:%M"
ward = "Larch"
planned_methods = ["Elective"]
emergency_methods = ["Emergency", "A&E"]
[history.columns]
admitted_at = "Admission Date"
discharged_at = "Discharge Date"
ward = "Ward"
specialty = "Specialty"
method = "Admission Method"
patient = "Patient ID"
"""

"""Reading a ward's history: daily admission counts or episode records.

Two kinds of file are accepted, each as CSV text or a sheet of an .xlsx workbook
(:mod:`planner.records.tables`), with columns named as the tool's fields or as
``history.columns`` maps them (:mod:`planner.records.mapping`), and the rows of one ward or
specialty kept when the scenario names them (:mod:`planner.records.selection`):

* daily counts, ``date,admissions``: ISO dates (YYYY-MM-DD) unless the scenario declares
  ``history.date_format``, one row per day in increasing order (or strictly newest first:
  then read in date order and said so), no gaps (unless ``history.fill_missing_days`` counts
  missing days as 0), non-negative whole numbers;
* episodes, ``admitted_at,discharged_at`` (or a date and a time column for each): ISO
  timestamps (YYYY-MM-DD HH:MM[:SS] or with a ``T``) unless the scenario declares
  ``history.timestamp_format`` (seconds are accepted after a declared format that stops at
  minutes); a discharge among ``history.still_on_ward`` (by default empty, NULL, NA, N/A,
  None, NaT, in any case) means the patient is still on the ward. With
  ``history.planned_methods`` or ``history.emergency_methods`` the episodes carry ``method``,
  "planned" or "emergency", from their admission method column.

Every problem raises :class:`PlannerError` naming the file (and sheet), the line (or row) in
the file, as it was before any rows were filtered out, and the column. Line numbers count the
header as line 1. What reading did that the user should hear of (rows kept by a filter, a file
read newest first) is in the result's ``attrs["notes"]``.
"""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np
import pandas as pd

from planner.errors import PlannerError
from planner.records.form import HistoryFormat
from planner.records.mapping import Rows
from planner.records.selection import (
    admission_methods,
    check_one_series,
    keep_rows,
    still_on_ward,
)
from planner.records.tables import read_rows

__all__ = [
    "HistoryFormat",
    "admissions_from_episodes",
    "episodes_end",
    "read_daily_admissions",
    "read_episodes",
]

_SLASHED = re.compile(r"^\d{1,2}[/.\-]\d{1,2}[/.\-]\d{2,4}\b")
_TIME_OF_DAY = r"^(\d{1,2}):(\d{2})(?::(\d{2}))?$"


def _parse_times(
    rows: Rows, name: str, fmt: str | None, *, dates_only: bool, values: pd.Series | None = None
) -> pd.Series:
    """Parse the field ``name`` (or ``values`` given for it) as dates (``fmt`` or ISO) or
    timestamps; an empty string becomes NaT."""
    values = rows.frame[name] if values is None else values
    given = values != ""
    pattern = fmt or ("%Y-%m-%d" if dates_only else "ISO8601")
    parsed = pd.to_datetime(values.where(given), format=pattern, errors="coerce")
    bad = (parsed.isna() & given).to_numpy()
    if bad.any() and fmt is not None and fmt.endswith("%M"):  # the same with seconds
        seconds = pd.to_datetime(values.where(bad), format=f"{fmt}:%S", errors="coerce")
        parsed = parsed.where(~bad, seconds)
        bad = (parsed.isna() & given).to_numpy()
    if not bad.any():
        return parsed
    row = rows.first(bad)
    value = values.iloc[row]
    key = "history.date_format" if dates_only else "history.timestamp_format"
    where = f"{rows.at(row)}: {rows.label(name)} {value!r}"
    if fmt is not None:
        raise PlannerError(f"{where} does not match {key} = {fmt!r}")
    expected = "YYYY-MM-DD" if dates_only else "YYYY-MM-DD HH:MM"
    problem = f"{where} is not a date in the form {expected}"
    good = rows.first((parsed.notna() & given).to_numpy())
    if good is not None:
        problem += f" ({rows.line(good)} has {values.iloc[good]!r}: the file mixes formats)"
    if _SLASHED.match(value):
        example = "%d/%m/%Y" if dates_only else "%d/%m/%Y %H:%M"
        problem += f"; for day-first dates set {key} = {example!r} in the scenario"
    raise PlannerError(problem)


def _times_of_day(rows: Rows, name: str, needed: np.ndarray) -> pd.Series:
    """A time column (H:MM or HH:MM[:SS]) as time since midnight, where ``needed``."""
    values = rows.frame[name]
    parts = values.str.extract(_TIME_OF_DAY).astype(float)
    hours, minutes, seconds = (parts[i].to_numpy() for i in range(3))
    seconds = np.nan_to_num(seconds)
    ok = (hours < 24) & (minutes < 60) & (seconds < 60)
    bad = needed & ~ok
    if bad.any():
        row = rows.first(bad)
        value = values.iloc[row]
        problem = "is empty" if value == "" else f"{value!r} is not a time of day HH:MM"
        raise PlannerError(f"{rows.at(row)}: {rows.label(name)} {problem}")
    total = np.where(needed, hours * 3600 + minutes * 60 + seconds, 0.0)
    return pd.Series(pd.to_timedelta(total, unit="s"), index=values.index)


def _moments(rows: Rows, moment: str, form: HistoryFormat, still: np.ndarray | None) -> pd.Series:
    """Admission or discharge times (``moment``: "admitted" or "discharged") from one column
    or from a date and a time column; NaT where ``still`` (still on the ward) or empty."""
    single = f"{moment}_at" in rows.frame
    name = f"{moment}_at" if single else f"{moment}_date"
    values = rows.frame[name] if still is None else rows.frame[name].where(~still, "")
    if single:
        return _parse_times(rows, name, form.timestamp_format, dates_only=False, values=values)
    days = _parse_times(rows, name, form.date_format, dates_only=True, values=values)
    clock = _times_of_day(rows, f"{moment}_time", days.notna().to_numpy())
    return (days + clock).rename(None)


def _counts(rows: Rows, name: str) -> np.ndarray:
    """Whole non-negative counts, or an error naming the first bad line."""
    text = rows.frame[name]
    values = pd.to_numeric(text, errors="coerce").to_numpy(dtype=float)
    bad = ~np.isfinite(values) | (values < 0) | (values != np.floor(values))
    if bad.any():
        row = rows.first(bad)
        raise PlannerError(
            f"{rows.at(row)}: {rows.label(name)} {text.iloc[row]!r} is not a non-negative "
            f"whole number"
        )
    return values.astype(np.int64)


def _notes(target, *notes: str | None):
    target.attrs["notes"] = tuple(note for note in notes if note)
    return target


def read_daily_admissions(path: str | Path, form: HistoryFormat | None = None) -> pd.Series:
    """Daily admissions from a daily counts file, as an int64 Series named ``admissions`` on a
    gap-free daily DatetimeIndex."""
    form = form or HistoryFormat()
    rows, kept = keep_rows(read_rows(Path(path), "daily", form), form)
    check_one_series(rows)
    empty = (rows.frame["date"] == "").to_numpy()
    if empty.any():
        raise PlannerError(f"{rows.at(rows.first(empty))}: {rows.label('date')} is empty")
    dates = _parse_times(rows, "date", form.date_format, dates_only=True).dt.normalize()
    order = None
    steps = dates.diff().dt.days.to_numpy()[1:]
    if steps.size and (steps < 0).all():
        rows, dates = rows.reversed(), dates.iloc[::-1]
        steps = dates.diff().dt.days.to_numpy()[1:]
        order = f"{rows.source}: rows run newest first; read in date order"
    counts = _counts(rows, "admissions")
    duplicated = dates.duplicated().to_numpy()
    if duplicated.any():
        row = rows.first(duplicated)
        first = rows.first((dates == dates.iloc[row]).to_numpy())
        raise PlannerError(
            f"{rows.at(row)}: {rows.label('date')} {dates.iloc[row].date()} appears twice "
            f"(also on {rows.line(first)})"
        )
    if (steps < 0).any():
        row = rows.first(steps < 0) + 1
        raise PlannerError(
            f"{rows.at(row)}: dates are not in increasing order "
            f"({dates.iloc[row].date()} after {dates.iloc[row - 1].date()})"
        )
    dates = pd.DatetimeIndex(dates.to_numpy(), name="date")
    series = pd.Series(counts, index=dates, name="admissions")
    if (steps > 1).any() and not form.fill_missing_days:
        row = rows.first(steps > 1) + 1
        raise PlannerError(
            f"{rows.at(row)}: days missing from "
            f"{(dates[row - 1] + pd.Timedelta(days=1)).date()} to "
            f"{(dates[row] - pd.Timedelta(days=1)).date()} (one row per day is required; "
            f"set history.fill_missing_days = true to count missing days as 0)"
        )
    full = pd.date_range(dates[0], dates[-1], freq="D", name="date")
    return _notes(series.reindex(full, fill_value=0).astype(np.int64), kept, order)


def read_episodes(path: str | Path, form: HistoryFormat | None = None) -> pd.DataFrame:
    """Episode records, sorted by admission: ``admitted_at``, ``discharged_at`` (NaT for
    patients still on the ward) and, when the scenario lists admission methods, ``method``
    ("planned" or "emergency")."""
    form = form or HistoryFormat()
    rows, kept = keep_rows(read_rows(Path(path), "episodes", form), form)
    methods = admission_methods(rows, form)
    admitted = _moments(rows, "admitted", form, None)
    leaving = "discharged_at" if "discharged_at" in rows.frame else "discharged_date"
    discharged = _moments(rows, "discharged", form, still_on_ward(rows, leaving, form))
    arriving = "admitted_at" if "admitted_at" in rows.frame else "admitted_date"
    if admitted.isna().any():
        raise PlannerError(
            f"{rows.at(rows.first(admitted.isna()))}: {rows.label(arriving)} is empty"
        )
    backwards = (discharged < admitted).to_numpy()
    if backwards.any():
        row = rows.first(backwards)
        raise PlannerError(
            f"{rows.at(row)}: {rows.label(leaving)} {discharged.iloc[row]:%Y-%m-%d %H:%M} is "
            f"before {rows.label(arriving)} {admitted.iloc[row]:%Y-%m-%d %H:%M}"
        )
    times = {"admitted_at": admitted.to_numpy(), "discharged_at": discharged.to_numpy()}
    episodes = pd.DataFrame(times)
    # Two completed stays with the same admission and discharge times (and patient, when the
    # file has one) are a record exported twice; open episodes may share an admission minute.
    same = (
        episodes.assign(patient=rows.frame["patient"].to_numpy())
        if "patient" in rows.frame
        else episodes
    )
    repeated = (same.duplicated() & discharged.notna().to_numpy()).to_numpy()
    if repeated.any():
        row = rows.first(repeated)
        first = rows.first((same == same.iloc[row]).all(axis=1).to_numpy())
        raise PlannerError(
            f"{rows.at(row)}: the same episode as {rows.line(first)} "
            f"({admitted.iloc[row]:%Y-%m-%d %H:%M} to {discharged.iloc[row]:%Y-%m-%d %H:%M}); "
            f"remove the duplicated record"
        )
    if methods is not None:
        episodes["method"] = methods
    episodes = episodes.sort_values("admitted_at", kind="stable").reset_index(drop=True)
    return _notes(episodes, kept)


def episodes_end(episodes: pd.DataFrame) -> pd.Timestamp:
    """The last day the episode file covers: the day of its latest admission or discharge."""
    latest = max(episodes["admitted_at"].max(), episodes["discharged_at"].max(skipna=True))
    return pd.Timestamp(latest).normalize()


def admissions_from_episodes(episodes: pd.DataFrame, end: pd.Timestamp | None = None) -> pd.Series:
    """Daily admission counts derived from episodes, from the first admission day through
    ``end`` (default :func:`episodes_end`), days without admissions counted as 0."""
    end = episodes_end(episodes) if end is None else pd.Timestamp(end).normalize()
    days = episodes["admitted_at"].dt.normalize()
    days = days[days <= end]
    index = pd.date_range(days.min(), end, freq="D", name="date")
    counts = days.value_counts().reindex(index, fill_value=0).astype(np.int64)
    return counts.rename("admissions")

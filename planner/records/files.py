"""Reading a ward's history: daily admission counts or episode records.

Two file shapes are accepted:

* daily counts, ``date,admissions``: ISO dates (YYYY-MM-DD) unless the scenario declares
  ``history.date_format``, one row per day in increasing order, no gaps (unless
  ``history.fill_missing_days`` counts missing days as 0), non-negative whole numbers;
* episodes, ``admitted_at,discharged_at``: ISO timestamps (YYYY-MM-DD HH:MM[:SS] or with a
  ``T``) unless the scenario declares ``history.timestamp_format`` (seconds are accepted after
  a declared format that stops at minutes); an empty ``discharged_at``, or one of the markers
  that exports write for "none" (NULL, NA, N/A, None, NaT, in any case), means the patient is
  still on the ward.

Both may be UTF-8 (with or without a byte-order mark) or Windows-1252 ("ANSI") text, with
Windows line ends, and either comma or semicolon separators. Every problem raises
:class:`PlannerError` naming the file, the line and the problem. Line numbers count the
header as line 1.
"""

from __future__ import annotations

import csv
import difflib
import io
import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from planner.errors import PlannerError
from planner.schema import default

#: What exports write in ``discharged_at`` for a patient still on the ward (any case).
STILL_IN_MARKERS = ("null", "na", "n/a", "none", "nat")
_SLASHED = re.compile(r"^\d{1,2}[/.\-]\d{1,2}[/.\-]\d{2,4}\b")


@dataclass(frozen=True)
class HistoryFormat:
    """How a ward's files write their dates, and what to do about missing days and about more
    patients on the ward than beds.

    date_format: ``strptime`` format of the daily file's ``date`` column (None: YYYY-MM-DD).
    timestamp_format: format of the episode file's timestamps (None: ISO 8601).
    fill_missing_days: count days absent from the daily file as 0 admissions (else refuse).
    over_beds: "refuse" or "allow" more patients on the ward at the start than beds open.
    """

    date_format: str | None = None
    timestamp_format: str | None = None
    fill_missing_days: bool = False
    over_beds: str = default("history.over_beds")


def _text(path: Path) -> str:
    """The file's text (UTF-8, byte-order mark dropped), refusing folders and binary data."""
    if path.is_dir():
        raise PlannerError(f"{path}: is a folder, not a CSV file")
    if not path.is_file():
        raise PlannerError(f"{path}: file not found")
    data = path.read_bytes()
    if data[:2] in (b"\xff\xfe", b"\xfe\xff"):
        raise PlannerError(f"{path}: is UTF-16 text; save it as CSV in UTF-8")
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
            f"file as CSV in UTF-8"
        ) from None


def _read_table(path: Path, columns: tuple[str, ...]) -> pd.DataFrame:
    """Read a CSV as stripped strings, checking it is not empty and has ``columns``."""
    text = _text(path)
    head = text.split("\n", 1)[0]
    if not text.strip():
        raise PlannerError(f"{path}: the file is empty")
    separator = ";" if head.count(";") > head.count(",") else ","
    try:
        frame = pd.read_csv(
            io.StringIO(text),
            sep=separator,
            dtype=str,
            keep_default_na=False,
            skipinitialspace=True,
            skip_blank_lines=True,
        )
    except (pd.errors.ParserError, csv.Error) as error:
        reason = str(error).strip().splitlines()[-1]
        raise PlannerError(f"{path}: cannot be read as CSV ({reason})") from None
    frame.columns = [str(name).strip().lower() for name in frame.columns]
    missing = [name for name in columns if name not in frame.columns]
    if missing:
        found = list(frame.columns)
        hints = [
            f"{close[0]!r} for {name!r}?"
            for name in missing
            if (close := difflib.get_close_matches(name, found, n=1, cutoff=0.6))
        ]
        hint = f" (misspelt: {' '.join(hints)})" if hints else ""
        raise PlannerError(
            f"{path}: line 1: missing column(s) {', '.join(missing)} (found: "
            f"{', '.join(found) or 'none'}){hint}; expected header: {','.join(columns)}"
        )
    if frame.empty:
        raise PlannerError(f"{path}: no data rows below the header")
    _check_one_ward(path, frame)
    return frame[list(columns)].fillna("").apply(lambda column: column.str.strip())


def _check_one_ward(path: Path, frame: pd.DataFrame) -> None:
    """Refuse a file whose ``ward`` column names several wards: its rows would be read as one
    ward's (a whole-hospital export taken for a single ward)."""
    if "ward" not in frame.columns:
        return
    wards = sorted({str(v).strip() for v in frame["ward"].fillna("")} - {""})
    if len(wards) > 1:
        shown = ", ".join(wards[:5]) + (", ..." if len(wards) > 5 else "")
        raise PlannerError(
            f"{path}: column ward names {len(wards)} wards ({shown}); planner reads one "
            f"ward's records: export the ward to plan, or one file per ward"
        )


def _parse_times(
    path: Path, column: str, values: pd.Series, fmt: str | None, *, dates_only: bool
) -> pd.Series:
    """Parse dates (``fmt`` or ISO) or timestamps; an empty string becomes NaT."""
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
    row = int(np.flatnonzero(bad)[0])
    value = values.iloc[row]
    key = "history.date_format" if dates_only else "history.timestamp_format"
    where = f"{path}: line {row + 2}: {column} {value!r}"
    if fmt is not None:
        raise PlannerError(f"{where} does not match {key} = {fmt!r}")
    expected = "YYYY-MM-DD" if dates_only else "YYYY-MM-DD HH:MM"
    problem = f"{where} is not a date in the form {expected}"
    good = np.flatnonzero((parsed.notna() & given).to_numpy())
    if good.size:
        problem += f" (line {good[0] + 2} has {values.iloc[good[0]]!r}: the file mixes formats)"
    if _SLASHED.match(value):
        example = "%d/%m/%Y" if dates_only else "%d/%m/%Y %H:%M"
        problem += f"; for day-first dates set {key} = {example!r} in the scenario"
    raise PlannerError(problem)


def _counts(path: Path, column: str, text: pd.Series) -> np.ndarray:
    """Whole non-negative counts, or an error naming the first bad line."""
    values = pd.to_numeric(text, errors="coerce").to_numpy(dtype=float)
    bad = ~np.isfinite(values) | (values < 0) | (values != np.floor(values))
    if bad.any():
        row = int(np.flatnonzero(bad)[0])
        raise PlannerError(
            f"{path}: line {row + 2}: {column} {text.iloc[row]!r} is not a non-negative "
            f"whole number"
        )
    return values.astype(np.int64)


def read_daily_admissions(path: str | Path, form: HistoryFormat | None = None) -> pd.Series:
    """Daily admissions from a ``date,admissions`` CSV, as an int64 Series named
    ``admissions`` on a gap-free daily DatetimeIndex."""
    path, form = Path(path), form or HistoryFormat()
    frame = _read_table(path, ("date", "admissions"))
    empty = (frame["date"] == "").to_numpy()
    if empty.any():
        raise PlannerError(f"{path}: line {int(np.flatnonzero(empty)[0]) + 2}: date is empty")
    dates = _parse_times(path, "date", frame["date"], form.date_format, dates_only=True)
    dates = dates.dt.normalize()
    counts = _counts(path, "admissions", frame["admissions"])
    duplicated = dates.duplicated().to_numpy()
    if duplicated.any():
        row = int(np.flatnonzero(duplicated)[0])
        first = int(np.flatnonzero((dates == dates.iloc[row]).to_numpy())[0])
        raise PlannerError(
            f"{path}: line {row + 2}: date {dates.iloc[row].date()} appears twice "
            f"(also on line {first + 2})"
        )
    steps = dates.diff().dt.days.to_numpy()[1:]
    if (steps < 0).any():
        row = int(np.flatnonzero(steps < 0)[0]) + 1
        raise PlannerError(
            f"{path}: line {row + 2}: dates are not in increasing order "
            f"({dates.iloc[row].date()} after {dates.iloc[row - 1].date()})"
        )
    series = pd.Series(counts, index=pd.DatetimeIndex(dates, name="date"), name="admissions")
    if (steps > 1).any() and not form.fill_missing_days:
        row = int(np.flatnonzero(steps > 1)[0]) + 1
        raise PlannerError(
            f"{path}: line {row + 2}: days missing from "
            f"{(dates.iloc[row - 1] + pd.Timedelta(days=1)).date()} to "
            f"{(dates.iloc[row] - pd.Timedelta(days=1)).date()} (one row per day is required; "
            f"set history.fill_missing_days = true to count missing days as 0)"
        )
    full = pd.date_range(dates.iloc[0], dates.iloc[-1], freq="D", name="date")
    return series.reindex(full, fill_value=0).astype(np.int64)


def read_episodes(path: str | Path, form: HistoryFormat | None = None) -> pd.DataFrame:
    """Episode records from an ``admitted_at,discharged_at`` CSV, sorted by admission.
    ``discharged_at`` is NaT for patients still on the ward."""
    path, form = Path(path), form or HistoryFormat()
    frame = _read_table(path, ("admitted_at", "discharged_at"))
    fmt = form.timestamp_format
    admitted = _parse_times(path, "admitted_at", frame["admitted_at"], fmt, dates_only=False)
    still_in = frame["discharged_at"].str.lower().isin(STILL_IN_MARKERS)
    discharges = frame["discharged_at"].where(~still_in, "")
    discharged = _parse_times(path, "discharged_at", discharges, fmt, dates_only=False)
    if admitted.isna().any():
        row = int(np.flatnonzero(admitted.isna().to_numpy())[0])
        raise PlannerError(f"{path}: line {row + 2}: admitted_at is empty")
    backwards = (discharged < admitted).to_numpy()
    if backwards.any():
        row = int(np.flatnonzero(backwards)[0])
        raise PlannerError(
            f"{path}: line {row + 2}: discharged_at {frame['discharged_at'].iloc[row]} is before "
            f"admitted_at {frame['admitted_at'].iloc[row]}"
        )
    episodes = pd.DataFrame({"admitted_at": admitted, "discharged_at": discharged})
    # Two completed stays with the same admission and discharge times are a record exported
    # twice; open episodes may share an admission minute on a busy ward.
    repeated = (episodes.duplicated() & discharged.notna()).to_numpy()
    if repeated.any():
        row = int(np.flatnonzero(repeated)[0])
        same = (episodes == episodes.iloc[row]).all(axis=1).to_numpy()
        raise PlannerError(
            f"{path}: line {row + 2}: the same episode as line {np.flatnonzero(same)[0] + 2} "
            f"({frame['admitted_at'].iloc[row]} to {frame['discharged_at'].iloc[row]}); "
            f"remove the duplicated record"
        )
    return episodes.sort_values("admitted_at", kind="stable").reset_index(drop=True)


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

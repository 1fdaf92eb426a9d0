"""Reading a ward's history: daily admission counts or episode records.

Two file shapes are accepted:

* daily counts, ``date,admissions``: ISO dates (YYYY-MM-DD), one row per day, no gaps,
  non-negative whole numbers;
* episodes, ``admitted_at,discharged_at``: ISO timestamps (YYYY-MM-DD HH:MM[:SS] or with a
  ``T``); an empty ``discharged_at`` means the patient is still on the ward.

Both may carry a UTF-8 byte-order mark, Windows line ends, and either comma or semicolon
separators. Every problem raises :class:`PlannerError` naming the file, the line and the
problem. Line numbers count the header as line 1.
"""

from __future__ import annotations

import csv
from pathlib import Path

import numpy as np
import pandas as pd

from planner.errors import PlannerError

HOURS_PER_DAY = 24.0


def _read_table(path: Path, columns: tuple[str, ...]) -> pd.DataFrame:
    """Read a small CSV as strings, checking it exists, is not empty and has ``columns``."""
    path = Path(path)
    if not path.is_file():
        raise PlannerError(f"{path}: file not found")
    with path.open(encoding="utf-8-sig", newline="") as handle:
        head = handle.readline()
    if not head.strip():
        raise PlannerError(f"{path}: the file is empty")
    separator = ";" if head.count(";") > head.count(",") else ","
    try:
        frame = pd.read_csv(
            path,
            sep=separator,
            dtype=str,
            keep_default_na=False,
            encoding="utf-8-sig",
            skipinitialspace=True,
        )
    except (pd.errors.ParserError, csv.Error, UnicodeDecodeError) as error:
        reason = str(error).strip().splitlines()[-1]
        raise PlannerError(f"{path}: cannot be read as CSV ({reason})") from None
    frame.columns = [str(name).strip().lower() for name in frame.columns]
    missing = [name for name in columns if name not in frame.columns]
    if missing:
        found = ", ".join(frame.columns) or "none"
        raise PlannerError(
            f"{path}: missing column(s) {', '.join(missing)} (found: {found}); "
            f"expected header: {','.join(columns)}"
        )
    if frame.empty:
        raise PlannerError(f"{path}: no data rows below the header")
    return frame[list(columns)].apply(lambda column: column.str.strip())


def _parse_times(path: Path, column: str, values: pd.Series, *, dates_only: bool) -> pd.Series:
    """Parse ISO dates or timestamps; an empty string becomes NaT."""
    fmt = "%Y-%m-%d" if dates_only else "ISO8601"
    parsed = pd.to_datetime(values.where(values != ""), format=fmt, errors="coerce")
    bad = parsed.isna() & (values != "")
    if bad.any():
        row = int(np.flatnonzero(bad.to_numpy())[0])
        expected = "YYYY-MM-DD" if dates_only else "YYYY-MM-DD HH:MM"
        raise PlannerError(
            f"{path}: line {row + 2}: {column} {values.iloc[row]!r} is not a date in the "
            f"form {expected}"
        )
    return parsed


def read_daily_admissions(path: str | Path) -> pd.Series:
    """Daily admissions from a ``date,admissions`` CSV, as an int64 Series named
    ``admissions`` on a gap-free daily DatetimeIndex."""
    path = Path(path)
    frame = _read_table(path, ("date", "admissions"))
    dates = _parse_times(path, "date", frame["date"], dates_only=True)
    empty = frame["date"] == ""
    if empty.any():
        raise PlannerError(f"{path}: line {int(np.flatnonzero(empty)[0]) + 2}: date is empty")
    counts = pd.to_numeric(frame["admissions"], errors="coerce")
    for row, (text, value) in enumerate(zip(frame["admissions"], counts, strict=True)):
        if np.isnan(value) or value < 0 or value != np.floor(value):
            raise PlannerError(
                f"{path}: line {row + 2}: admissions {text!r} is not a non-negative whole number"
            )
    duplicated = dates.duplicated()
    if duplicated.any():
        row = int(np.flatnonzero(duplicated.to_numpy())[0])
        raise PlannerError(f"{path}: line {row + 2}: date {frame['date'].iloc[row]} appears twice")
    steps = dates.diff().dt.days.to_numpy()[1:]
    if (steps < 0).any():
        row = int(np.flatnonzero(steps < 0)[0]) + 1
        raise PlannerError(f"{path}: line {row + 2}: dates are not in increasing order")
    if (steps > 1).any():
        row = int(np.flatnonzero(steps > 1)[0]) + 1
        gap_start = (dates.iloc[row - 1] + pd.Timedelta(days=1)).date()
        raise PlannerError(
            f"{path}: line {row + 2}: days missing from {gap_start} to "
            f"{(dates.iloc[row] - pd.Timedelta(days=1)).date()} (one row per day is required)"
        )
    index = pd.DatetimeIndex(dates, freq="D", name="date")
    return pd.Series(counts.to_numpy(dtype=np.int64), index=index, name="admissions")


def read_episodes(path: str | Path) -> pd.DataFrame:
    """Episode records from an ``admitted_at,discharged_at`` CSV, sorted by admission.
    ``discharged_at`` is NaT for patients still on the ward."""
    path = Path(path)
    frame = _read_table(path, ("admitted_at", "discharged_at"))
    admitted = _parse_times(path, "admitted_at", frame["admitted_at"], dates_only=False)
    discharged = _parse_times(path, "discharged_at", frame["discharged_at"], dates_only=False)
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


def inpatients_at(episodes: pd.DataFrame, moment: pd.Timestamp) -> np.ndarray:
    """Elapsed stays (days) at ``moment`` of the patients on the ward then: admitted before it
    and not yet discharged (discharge after it, or none recorded)."""
    moment = pd.Timestamp(moment)
    admitted = episodes["admitted_at"]
    discharged = episodes["discharged_at"]
    present = (admitted < moment) & (discharged.isna() | (discharged > moment))
    elapsed = (moment - admitted[present]).dt.total_seconds() / 3600.0 / HOURS_PER_DAY
    return np.sort(elapsed.to_numpy(dtype=float))


def completed_stays(episodes: pd.DataFrame, before: pd.Timestamp | None = None) -> np.ndarray:
    """Lengths of stay (days) of episodes discharged (before ``before`` when given)."""
    done = episodes.dropna(subset=["discharged_at"])
    if before is not None:
        done = done[done["discharged_at"] <= pd.Timestamp(before)]
    stays = (done["discharged_at"] - done["admitted_at"]).dt.total_seconds() / 3600.0
    return (stays / HOURS_PER_DAY).to_numpy(dtype=float)

"""The file's columns for the tool's fields: where a file's rows come from (:class:`Source`),
which of its columns hold which field (:func:`locate`, by ``history.columns`` or the field's own
name), and the rows as field-named text (:class:`Rows`) that keep their line numbers in the
file, so that every message names the line (or sheet and row) and the column as the user sees
them, after any rows are filtered out."""

from __future__ import annotations

import difflib
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from planner.errors import PlannerError
from planner.records.form import HistoryFormat


@dataclass(frozen=True)
class Source:
    """A file, or one sheet of a workbook, for messages: ``FILE`` and ``FILE: line N``, or
    ``FILE: sheet 'S'`` and ``FILE: sheet 'S', row N``."""

    path: Path
    sheet: str | None = None

    def __str__(self) -> str:
        return str(self.path) if self.sheet is None else f"{self.path}: sheet {self.sheet!r}"

    def line(self, line: int) -> str:
        """``line N`` in a CSV file, ``row N`` in a sheet."""
        return f"line {line}" if self.sheet is None else f"row {line}"

    def at(self, line: int) -> str:
        return f"{self}: line {line}" if self.sheet is None else f"{self}, row {line}"


@dataclass(frozen=True)
class Rows:
    """A file's data rows as stripped text, one column per field read; the index holds each
    row's line (or row) number in the file, the header being line 1."""

    source: Source
    frame: pd.DataFrame
    labels: dict[str, str] = field(default_factory=dict)

    def label(self, name: str) -> str:
        """How messages name a field's column: ``Adm Date (admitted_at)`` when mapped."""
        return self.labels.get(name, name)

    def at(self, position: int) -> str:
        """``FILE: line N`` of the row at ``position`` (0 = first row kept)."""
        return self.source.at(int(self.frame.index[position]))

    def line(self, position: int) -> str:
        """``line N`` (or ``row N``) of the row at ``position``, without the file."""
        return self.source.line(int(self.frame.index[position]))

    def first(self, mask) -> int | None:
        """Position of the first row where ``mask`` is true, or None."""
        hits = np.flatnonzero(np.asarray(mask, dtype=bool))
        return int(hits[0]) if hits.size else None

    def keep(self, mask) -> Rows:
        return Rows(self.source, self.frame[np.asarray(mask, dtype=bool)], self.labels)

    def reversed(self) -> Rows:
        return Rows(self.source, self.frame.iloc[::-1], self.labels)


def _time_fields(form: HistoryFormat, moment: str) -> tuple[str, ...]:
    """``admitted_at``, or ``admitted_date`` and ``admitted_time`` when those are mapped."""
    if form.column(f"{moment}_date") or form.column(f"{moment}_time"):
        return (f"{moment}_date", f"{moment}_time")
    return (f"{moment}_at",)


def fields_of(kind: str, form: HistoryFormat) -> tuple[tuple[str, ...], tuple[str, ...]]:
    """The fields a file of ``kind`` ("episodes" or "daily") must have, and those it may have
    (read when their column is there)."""
    if kind == "daily":
        required = ("date", "admissions")
    else:
        required = _time_fields(form, "admitted") + _time_fields(form, "discharged")
    optional = ["ward", "specialty"]
    if kind == "episodes":
        optional += ["method", "patient"]
    return required, tuple(optional)


def _wanted_optional(name: str, form: HistoryFormat) -> bool:
    """Whether an optional field is read: the ward always (a file of several wards is
    refused), the others when mapped or when the scenario acts on them."""
    acted_on = {
        "ward": True,
        "specialty": bool(form.specialties),
        "method": form.reads_methods,
        "patient": False,
    }[name]
    return acted_on or form.column(name) is not None


def _hint(name: str, found: list[str]) -> str:
    close = difflib.get_close_matches(name, found, n=1, cutoff=0.6)
    return f" (misspelt: {close[0]!r} for {name!r}?)" if close else ""


def _missing(source: Source, names: list[str], header: list[str], required) -> PlannerError:
    found = ", ".join(header) or "none"
    hints = "".join(_hint(name, [h.lower() for h in header]) for name in names)
    return PlannerError(
        f"{source.at(1)}: missing column(s) {', '.join(names)} (found: {found}){hints}; "
        f"expected header: {','.join(required)}"
    )


def locate(source: Source, header: list[str], kind: str, form: HistoryFormat) -> dict[str, int]:
    """Which column (by position) holds each field read from a file of ``kind``, with its
    header ``header``; refuses a missing or doubled column, naming it as the user wrote it. A
    mapped column the daily file lacks is refused only when a filter needs it (one mapping
    serves both files)."""
    names = [str(name).strip().lower() for name in header]
    required, optional = fields_of(kind, form)
    positions: dict[str, int] = {}
    missing = []
    for name in required + tuple(o for o in optional if _wanted_optional(o, form)):
        mapped = form.column(name)
        wanted = (mapped or name).strip().lower()
        hits = [i for i, text in enumerate(names) if text == wanted]
        if len(hits) > 1:
            raise PlannerError(
                f"{source.at(1)}: column {header[hits[0]].strip()!r} appears {len(hits)} times; "
                f"give each column its own name"
            )
        if hits and hits[0] in positions.values() and mapped is None:
            continue  # the field's own name is another field's mapped column
        if hits:
            positions[name] = hits[0]
        elif mapped is not None and (kind == "episodes" or name in required):
            raise PlannerError(
                f"{source.at(1)}: no column {mapped!r} (history.columns.{name}) (found: "
                f"{', '.join(h.strip() for h in header) or 'none'})"
                f"{_hint(wanted, names).replace(repr(wanted), repr(mapped))}"
            )
        elif name in required:
            missing.append(name)
    if missing:
        raise _missing(source, missing, [h.strip() for h in header], required)
    for name, key in (("ward", "history.ward"), ("specialty", "history.specialty")):
        if name not in positions and (form.wards if name == "ward" else form.specialties):
            raise PlannerError(
                f"{source.at(1)}: no {name} column for {key} (found: "
                f"{', '.join(h.strip() for h in header)}); name it with history.columns.{name}"
            )
    if kind == "episodes" and form.reads_methods and "method" not in positions:
        raise PlannerError(
            f"{source.at(1)}: no method column for history.planned_methods and "
            f"history.emergency_methods; name it with history.columns.method"
        )
    return positions


def labels(header: list[str], positions: dict[str, int], form: HistoryFormat) -> dict[str, str]:
    """Message names of mapped fields: the file's column and the field, ``Adm (admitted_at)``."""
    return {
        name: f"{header[at].strip()} ({name})"
        for name, at in positions.items()
        if form.column(name) is not None and header[at].strip().lower() != name
    }


def blank_rows(frame: pd.DataFrame) -> np.ndarray:
    """Which rows of a table of text have no text in any column."""
    blank = np.ones(len(frame), dtype=bool)
    for column in frame.columns:
        blank &= (frame[column].fillna("").astype(str).str.strip() == "").to_numpy()
    return blank


def rows_from_frame(
    source: Source, frame: pd.DataFrame, lines: np.ndarray, header: list[str],
    positions: dict[str, int], form: HistoryFormat,
) -> Rows:  # fmt: skip
    """The located fields (``positions``, from :func:`locate`) of a table of text whose columns
    are labelled by position and whose rows (blank ones dropped) start on ``lines``; refuses
    a table with no data rows."""
    if frame.empty:
        raise PlannerError(f"{source}: no data rows below the header")
    chosen = pd.DataFrame(
        {
            name: frame[at].fillna("").astype(str).str.strip().to_numpy()
            for name, at in positions.items()
        },
        index=pd.Index(lines, name="line"),
    )
    return Rows(source, chosen, labels(header, positions, form))

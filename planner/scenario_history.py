"""The scenario's ``[history]`` table read into how the history files are written
(:class:`planner.records.files.HistoryFormat`), each rule between its keys checked here."""

from __future__ import annotations

from typing import Any

from planner.errors import PlannerError
from planner.records.files import HistoryFormat
from planner.records.form import DAILY_FIELDS, EPISODE_FIELDS, OPTIONAL_FIELDS
from planner.schema_checks import table_values


def _names(value: str | list[str] | None) -> tuple[str, ...]:
    """A text or a list of texts (or nothing) as a tuple."""
    if value is None:
        return ()
    return (value,) if isinstance(value, str) else tuple(value)


def _check_columns(columns: dict[str, str], history: dict[str, Any], where: str) -> None:
    """One field per column of a file (an episode field and a daily field may share a name:
    they are read from different files); a time from one column or from a date and a time column; a
    mapped method column read by the method lists."""
    for fields in (EPISODE_FIELDS + OPTIONAL_FIELDS, DAILY_FIELDS + OPTIONAL_FIELDS):
        seen: dict[str, str] = {}
        for name in (name for name in fields if name in columns):
            other = seen.setdefault(columns[name].strip().lower(), name)
            if other != name:
                raise PlannerError(
                    f"{where}: history.columns.{name}: column {columns[name]!r} is also mapped "
                    f"to history.columns.{other}; give each field its own column"
                )
    for moment in ("admitted", "discharged"):
        date, time = f"{moment}_date" in columns, f"{moment}_time" in columns
        if f"{moment}_at" in columns and (date or time):
            raise PlannerError(
                f"{where}: history.columns.{moment}_at: give either {moment}_at or "
                f"{moment}_date with {moment}_time, not both"
            )
        if date != time:
            given, missing = (f"{moment}_date", f"{moment}_time")[:: 1 if date else -1]
            raise PlannerError(
                f"{where}: history.columns.{given}: give history.columns.{missing} too (or map "
                f"{moment}_at to one column holding date and time)"
            )
    if "method" in columns and not (history["planned_methods"] or history["emergency_methods"]):
        raise PlannerError(
            f"{where}: history.columns.method: say what its values mean with "
            f"history.planned_methods and history.emergency_methods"
        )


def history_format(document: dict[str, Any], where: str) -> HistoryFormat:
    """How the history files are written: the [history] keys other than the file paths."""
    history = table_values(document, "history")
    columns = {k: v for k, v in table_values(document, "history.columns").items() if v is not None}
    _check_columns(columns, history, where)
    planned = {value.strip().lower(): value for value in history["planned_methods"]}
    for value in history["emergency_methods"]:
        if value.strip().lower() in planned:
            raise PlannerError(
                f"{where}: history.emergency_methods: {value!r} is also in "
                f"history.planned_methods; a method means one or the other"
            )
    return HistoryFormat(
        date_format=history["date_format"],
        timestamp_format=history["timestamp_format"],
        fill_missing_days=history["fill_missing_days"],
        over_beds=history["over_beds"],
        columns=tuple(columns.items()),
        wards=_names(history["ward"]),
        specialties=_names(history["specialty"]),
        planned_methods=tuple(history["planned_methods"]),
        emergency_methods=tuple(history["emergency_methods"]),
        still_on_ward=tuple(history["still_on_ward"]),
        encoding=history["encoding"],
        episodes_sheet=history["episodes_sheet"],
        admissions_sheet=history["admissions_sheet"],
    )

"""Checking a parsed scenario document against the key table in :mod:`planner.schema`:
unknown keys (with a close-match suggestion), wrong types and impossible values, each
reported with its key path."""

from __future__ import annotations

import codecs
import difflib
import math
import re
from datetime import date, datetime
from typing import Any

from planner.errors import PlannerError
from planner.schema import TABLES, TOP, Key, Table

_HOUR = re.compile(r"^([01]\d|2[0-3]):([0-5]\d)$")
#: A day whose day, month and year all differ, to check that a date format keeps all three.
_PROBE = datetime(2031, 11, 29, 13, 45)


def _full_date_format(text: str) -> bool:
    """Whether a strptime format writes and reads back day, month and year."""
    try:
        back = datetime.strptime(_PROBE.strftime(text), text)
    except ValueError:
        return False
    return back.date() == _PROBE.date()


def _is_text_list(value: Any) -> bool:
    return isinstance(value, list) and all(isinstance(v, str) for v in value)


def _known_encoding(value: Any) -> bool:
    if not isinstance(value, str):
        return False
    try:
        codecs.lookup(value)
    except LookupError:
        return False
    return True


def _kind_error(key: Key, value: Any) -> str | None:
    """Why ``value`` is not of the key's kind, or None."""
    expected = {
        "int": "a whole number",
        "float": "a number",
        "bool": "true or false",
        "str": "text",
        "date": "a date (YYYY-MM-DD, unquoted)",
        "hour": 'a time "HH:MM"',
        "path": "a path",
        "auto_bool": 'true, false or "auto"',
        "dates": "a list of dates",
        "roster": "a list of 7 whole numbers (Monday..Sunday)",
        "date_format": 'a strptime format with day, month and year, e.g. "%d/%m/%Y"',
        "column": "a column name (text)",
        "names": 'a text or a list of texts, e.g. "Larch" or ["Larch", "Rowan"]',
        "texts": 'a list of texts, e.g. ["Elective", "Booked"]',
        "encoding": 'a text encoding, e.g. "utf-8", "cp1252", "latin-1" or "utf-16"',
        "sheet": "a sheet name, or its number (1 = first)",
    }[key.kind]
    ok = {
        "int": isinstance(value, int) and not isinstance(value, bool),
        "float": isinstance(value, int | float) and not isinstance(value, bool),
        "bool": isinstance(value, bool),
        "str": isinstance(value, str),
        "path": isinstance(value, str) and value.strip() != "",
        "date": isinstance(value, date),
        "hour": isinstance(value, str) and bool(_HOUR.match(value)),
        "auto_bool": isinstance(value, bool) or value == "auto",
        "dates": isinstance(value, list) and all(isinstance(v, date) for v in value),
        "roster": isinstance(value, list)
        and len(value) == 7
        and all(isinstance(v, int) and not isinstance(v, bool) and v >= 0 for v in value),
        "date_format": isinstance(value, str) and _full_date_format(value),
        "column": isinstance(value, str) and value.strip() != "",
        "names": (isinstance(value, str) and value.strip() != "")
        or (_is_text_list(value) and value != [] and all(v.strip() for v in value)),
        "texts": _is_text_list(value),
        "encoding": _known_encoding(value),
        "sheet": (isinstance(value, str) and value.strip() != "")
        or (isinstance(value, int) and not isinstance(value, bool) and value >= 1),
    }[key.kind]
    return None if ok else f"must be {expected}, got {value!r}"


def _check_key(key: Key, value: Any, where: str) -> None:
    problem = _kind_error(key, value)
    if problem is None and key.kind == "float" and not math.isfinite(value):
        problem = f"must be a finite number, got {value!r}"
    if problem is None and key.choices and value not in key.choices:
        problem = f"must be one of {', '.join(key.choices)}, got {value!r}"
    if problem is None and key.minimum is not None and value < key.minimum:
        problem = f"must be >= {key.minimum:g}, got {value!r}"
    if problem is None and key.above is not None and value <= key.above:
        problem = f"must be > {key.above:g}, got {value!r}"
    if problem:
        raise PlannerError(f"{where}: {problem}")


def table_values(document: dict[str, Any], name: str) -> dict[str, Any]:
    """Values of one table (``"history.columns"``) of a merged document, defaults filled in."""
    spec = next(table for table in TABLES if table.name == name)
    given = document
    for part in name.split("."):
        given = given.get(part, {})
    return {key.name: given.get(key.name, key.default) for key in spec.keys}


def _unknown(name: str, known: list[str], where: str) -> PlannerError:
    close = difflib.get_close_matches(name, known, n=1, cutoff=0.5)
    hint = f" (did you mean {close[0]!r}?)" if close else ""
    return PlannerError(f"{where}: unknown key{hint}")


def _check_table(table: Table, values: Any, where: str) -> None:
    if not isinstance(values, dict):
        raise PlannerError(f"{where}: must be a table")
    keys = {key.name: key for key in table.keys}
    children = [t.name.split(".")[-1] for t in TABLES if t.name.startswith(table.name + ".")]
    for name, value in values.items():
        if name in children:
            continue
        if name not in keys:
            raise _unknown(name, list(keys) + children, f"{where}.{name}")
        _check_key(keys[name], value, f"{where}.{name}")
    for key in table.keys:
        if key.required and key.name not in values:
            raise PlannerError(f"{where}.{key.name}: required key is missing")


def validate(document: dict, source: str) -> None:
    """Check a parsed scenario document (before ``extends`` is resolved, so each file is
    checked on its own). ``source`` (the file name) starts every message."""
    top = {key.name: key for key in TOP}
    tables = {table.name: table for table in TABLES}
    roots = [name for name in tables if "." not in name]
    for name, value in document.items():
        if name in top:
            _check_key(top[name], value, f"{source}: {name}")
        elif name in roots:
            _check_nested(tables, name, value, f"{source}: {name}")
        else:
            raise _unknown(name, list(top) + roots, f"{source}: {name}")


def _check_nested(tables: dict[str, Table], name: str, value: Any, where: str) -> None:
    table = tables[name]
    if table.many:
        if not isinstance(value, list) or not all(isinstance(item, dict) for item in value):
            raise PlannerError(f"{where}: must be an array of tables ([[{name}]])")
        for number, item in enumerate(value, start=1):
            _check_table(table, item, f"{where}[{number}]")
        return
    _check_table(table, value, where)
    for child in (t for t in tables if t.startswith(name + ".")):
        field = child.split(".")[-1]
        if field in value:
            _check_nested(tables, child, value[field], f"{where}.{field}")

"""The scenario file's keys: types, defaults, limits and documentation in one table.

:data:`SCHEMA` is the single source of truth: :func:`validate` checks a parsed TOML document
against it (unknown keys with a close-match suggestion, wrong types, impossible values, each
reported with its key path), and :func:`document` renders it as the key reference in
docs/scenario.md.
"""

from __future__ import annotations

import difflib
import re
from dataclasses import dataclass
from datetime import date, datetime
from typing import Any

from planner.errors import PlannerError


@dataclass(frozen=True)
class Key:
    """One scenario key. ``kind`` is one of: int, float, bool, str, date, hour ("HH:MM"),
    path, auto_bool (true, false or "auto"), dates (list of dates), roster (7 whole numbers),
    date_format (a strptime format giving day, month and year)."""

    name: str
    kind: str
    default: Any
    doc: str
    unit: str = ""
    choices: tuple[str, ...] = ()
    minimum: float | None = None
    above: float | None = None
    required: bool = False


@dataclass(frozen=True)
class Table:
    """A TOML table (``many=False``) or array of tables (``many=True``)."""

    name: str
    doc: str
    keys: tuple[Key, ...]
    many: bool = False


TOP = (
    Key("name", "str", None, "Scenario name, shown in reports (default: the file name)."),
    Key("description", "str", "", "Free text shown under the report title."),
    Key(
        "extends",
        "path",
        None,
        "Another scenario file this one starts from; keys given "
        "here override it (tables merge key by key; arrays of tables are replaced whole).",
    ),
    Key("horizon_weeks", "int", 13, "Length of the forecast.", "weeks", minimum=1),
    Key("start", "date", None, "First forecast day (default: the day after the history ends)."),
    Key("paths", "int", 1000, "Number of simulated sample paths.", "paths", minimum=1),
    Key(
        "seed",
        "int",
        20261201,
        "Seed of all random numbers; the same seed gives the same results.",
        minimum=0,
    ),
)

TABLES = (
    Table(
        "history",
        "Input files, relative to the scenario file. Give episodes, admissions "
        "or both (then admissions feed the forecast and episodes the stays and current "
        "inpatients).",
        (
            Key("admissions", "path", None, "Daily counts CSV with columns date,admissions."),
            Key(
                "episodes",
                "path",
                None,
                "Episode CSV with columns admitted_at,discharged_at; "
                "empty discharged_at = still on the ward.",
            ),
            Key(
                "date_format",
                "date_format",
                None,
                "How the daily file writes dates, as a strptime format, e.g. "
                '"%d/%m/%Y" for day-first 30/11/2026 (default: YYYY-MM-DD).',
            ),
            Key(
                "timestamp_format",
                "date_format",
                None,
                "How the episode file writes timestamps, e.g. "
                '"%d/%m/%Y %H:%M" (default: ISO, YYYY-MM-DD HH:MM).',
            ),
            Key(
                "fill_missing_days",
                "bool",
                False,
                "Count days missing from the daily file as 0 admissions "
                "(default: refuse a file with missing days).",
            ),
        ),
    ),
    Table(
        "forecast",
        "How daily admissions are forecast.",
        (
            Key(
                "strategy",
                "str",
                "auto",
                "Multi-step strategy: one one-step AR model fed its "
                "own predictions, one model per horizon day, or the one scoring better in the "
                "backtest.",
                choices=("recursive", "direct", "auto"),
            ),
            Key("max_lag", "int", 28, "Largest AR order tried.", "days", minimum=1),
            Key(
                "criterion",
                "str",
                "aic",
                "Information criterion choosing the AR order.",
                choices=("aic", "bic"),
            ),
            Key("order", "int", None, "Fixed AR order instead of choosing one.", "days", minimum=1),
            Key("weekday", "bool", True, "Day-of-week terms."),
            Key(
                "annual",
                "auto_bool",
                "auto",
                "Annual cycle (Fourier terms); auto = on when the history covers 2 years or more.",
            ),
            Key("fourier_pairs", "int", 3, "Sine/cosine pairs for the annual cycle.", minimum=1),
            Key("trend", "bool", False, "Linear time trend."),
            Key("holidays", "dates", [], "Public holidays (past and future) as dates."),
            Key(
                "holiday_country",
                "str",
                None,
                "Country code for public holidays from the "
                'holidays package (e.g. "GB"), added to the listed dates.',
            ),
            Key(
                "residuals",
                "str",
                "in_sample",
                "Residuals resampled for the paths: fit "
                "residuals, or out-of-sample errors from the backtest.",
                choices=("in_sample", "backtest"),
            ),
            Key(
                "refit",
                "bool",
                False,
                "Refit the recursive model on bootstrap series (adds parameter uncertainty).",
            ),
            Key(
                "backtest_origins",
                "int",
                26,
                "Rolling forecast origins in the backtest.",
                minimum=1,
            ),
            Key(
                "backtest_every_days", "int", 7, "Days between backtest origins.", "days", minimum=1
            ),
        ),
    ),
    Table(
        "demand",
        "Changes to forecast demand.",
        (Key("growth", "float", 0.0, "Relative change on every day (0.05 = +5%).", above=-1.0),),
    ),
    Table(
        "demand.surge",
        "Dated surges multiplying expected admissions.",
        (
            Key("start", "date", None, "First day.", required=True),
            Key("end", "date", None, "Last day (inclusive).", required=True),
            Key("factor", "float", None, "Multiplier (1.2 = +20%).", above=0.0, required=True),
        ),
        many=True,
    ),
    Table(
        "stay",
        "Length of stay.",
        (
            Key(
                "model",
                "str",
                "empirical",
                "Resample the episode stays, fit a family by "
                "maximum likelihood, or the fitted family with the lowest AIC.",
                choices=("empirical", "lognormal", "gamma", "weibull", "exponential", "best"),
            ),
            Key(
                "mean",
                "float",
                None,
                "Mean stay given directly instead of learned from episodes.",
                "days",
                above=0.0,
            ),
            Key("sd", "float", None, "Standard deviation with mean.", "days", above=0.0),
            Key("change_days", "float", 0.0, "Change of the mean stay (e.g. -0.5).", "days"),
            Key("scale", "float", 1.0, "Multiplier on every stay (e.g. 0.9).", above=0.0),
        ),
    ),
    Table(
        "beds",
        "Beds and what happens when none is free.",
        (
            Key("base", "int", 28, "Beds normally open.", "beds", minimum=1),
            Key(
                "policy",
                "str",
                "wait",
                "No free bed: the patient waits (first come, first "
                "served) or is placed elsewhere (diverted, lost to this ward).",
                choices=("wait", "divert"),
            ),
        ),
    ),
    Table(
        "beds.change",
        "Dated changes in beds open: escalation beds (+) or closures (-).",
        (
            Key("start", "date", None, "First day.", required=True),
            Key("end", "date", None, "Last day (inclusive).", required=True),
            Key("change", "int", None, "Beds added (+) or closed (-).", "beds", required=True),
        ),
        many=True,
    ),
    Table(
        "staffing",
        "Registered nurses.",
        (
            Key(
                "minimum_nurses",
                "int",
                2,
                "Fewest registered nurses on any shift.",
                "nurses",
                minimum=1,
            ),
        ),
    ),
    Table(
        "staffing.shift",
        "Shifts of the daily rota; together they must cover the 24 hours "
        "once. Default: day 07:00-19:00 at 4 patients per nurse, 5 rostered; night "
        "19:00-07:00 at 7 patients per nurse, 3 rostered.",
        (
            Key("name", "str", None, "Shift name.", required=True),
            Key("start", "hour", None, "Start time HH:MM.", required=True),
            Key(
                "end",
                "hour",
                None,
                "End time HH:MM (earlier than start = next day).",
                required=True,
            ),
            Key(
                "patients_per_nurse",
                "float",
                None,
                "Patients per registered nurse.",
                "patients",
                above=0.0,
                required=True,
            ),
            Key(
                "roster",
                "roster",
                None,
                "Nurses rostered Monday..Sunday (7 numbers).",
                "nurses",
                required=True,
            ),
        ),
        many=True,
    ),
    Table(
        "staffing.override",
        "Dated changes to the roster of one shift.",
        (
            Key("start", "date", None, "First day.", required=True),
            Key("end", "date", None, "Last day (inclusive).", required=True),
            Key("shift", "str", None, "Shift name.", required=True),
            Key(
                "nurses",
                "int",
                None,
                "Nurses rostered on those days.",
                "nurses",
                minimum=0,
                required=True,
            ),
        ),
        many=True,
    ),
    Table(
        "costs",
        "Optional unit costs for comparing plans (any currency).",
        (
            Key("bed_day", "float", 0.0, "Per open bed per day.", minimum=0.0),
            Key("nurse_shift", "float", 0.0, "Per rostered nurse shift.", minimum=0.0),
            Key("diverted_patient", "float", 0.0, "Per patient placed elsewhere.", minimum=0.0),
            Key("waiting_hour", "float", 0.0, "Per patient-hour waiting for a bed.", minimum=0.0),
        ),
    ),
)

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
    }[key.kind]
    return None if ok else f"must be {expected}, got {value!r}"


def _check_key(key: Key, value: Any, where: str) -> None:
    problem = _kind_error(key, value)
    if problem is None and key.choices and value not in key.choices:
        problem = f"must be one of {', '.join(key.choices)}, got {value!r}"
    if problem is None and key.minimum is not None and value < key.minimum:
        problem = f"must be >= {key.minimum:g}, got {value!r}"
    if problem is None and key.above is not None and value <= key.above:
        problem = f"must be > {key.above:g}, got {value!r}"
    if problem:
        raise PlannerError(f"{where}: {problem}")


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


def document() -> str:
    """The key reference as Markdown (written to docs/scenario.md)."""
    lines = [
        "# Scenario file keys",
        "",
        "Generated from `planner/schema.py`; "
        "regenerate with `python -m planner.schema > docs/scenario.md`.",
        "",
    ]

    def rows(keys: tuple[Key, ...]) -> list[str]:
        out = ["| key | type | default | unit | meaning |", "|---|---|---|---|---|"]
        for key in keys:
            default = (
                "required" if key.required else ("" if key.default is None else repr(key.default))
            )
            choices = f" One of: {', '.join(key.choices)}." if key.choices else ""
            out.append(
                f"| `{key.name}` | {key.kind} | {default} | {key.unit} | {key.doc}{choices} |"
            )
        return out

    lines += ["## Top level", ""] + rows(TOP) + [""]
    for table in TABLES:
        header = f"[[{table.name}]]" if table.many else f"[{table.name}]"
        lines += [f"## `{header}`", "", table.doc, ""] + rows(table.keys) + [""]
    return "\n".join(lines)


if __name__ == "__main__":  # pragma: no cover
    print(document())

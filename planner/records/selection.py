"""Which rows of a file are the ward's (``history.ward``, ``history.specialty``), and what the
admission method column says (``history.planned_methods``, ``history.emergency_methods``)."""

from __future__ import annotations

import difflib

import numpy as np
import pandas as pd

from planner.errors import PlannerError
from planner.records.form import EMERGENCY, PLANNED, HistoryFormat
from planner.records.mapping import Rows

#: Filters: the field, the scenario key and the values kept.
_FILTERS = (("ward", "history.ward", "wards"), ("specialty", "history.specialty", "specialties"))


def _shown(values, most: int = 5) -> str:
    values = list(values)
    return ", ".join(values[:most]) + (", ..." if len(values) > most else "")


def _found(rows: Rows, name: str) -> list[str]:
    return sorted(set(rows.frame[name]) - {""})


def keep_rows(rows: Rows, form: HistoryFormat) -> tuple[Rows, str | None]:
    """The rows of the wards and specialties asked for (any case), and a note saying how many
    were kept (None without filters). Refuses a listed value no row has, and without
    ``history.ward`` a file whose ward column names several wards."""
    mask = np.ones(len(rows.frame), dtype=bool)
    asked = []
    for name, key, attribute in _FILTERS:
        wanted = getattr(form, attribute)
        if not wanted:
            continue
        values = rows.frame[name].str.lower()
        present = set(values)
        for value in wanted:
            if value.strip().lower() not in present:
                found = _found(rows, name)
                close = difflib.get_close_matches(value, found, n=1, cutoff=0.6)
                hint = f"; did you mean {close[0]!r}?" if close else ""
                raise PlannerError(
                    f"{rows.source}: {key}: no row has {name} {value!r} in column "
                    f"{rows.label(name)} ({len(found)} found: {_shown(found)}){hint}"
                )
        mask &= values.isin({value.strip().lower() for value in wanted}).to_numpy()
        asked.append(f"{name} {', '.join(wanted)}")
    if not asked:
        _check_one_ward(rows)
        return rows, None
    kept = rows.keep(mask)
    if kept.frame.empty:
        raise PlannerError(f"{rows.source}: no row has {' and '.join(asked)}")
    note = f"{rows.source}: {len(kept.frame)} of {len(rows.frame)} rows read ({'; '.join(asked)})"
    return kept, note


def _check_one_ward(rows: Rows) -> None:
    """Refuse a file whose ward column names several wards: its rows would be read as one
    ward's (a whole-hospital export taken for a single ward)."""
    if "ward" not in rows.frame:
        return
    wards = _found(rows, "ward")
    if len(wards) > 1:
        raise PlannerError(
            f"{rows.source}: column {rows.label('ward')} names {len(wards)} wards "
            f"({_shown(wards)}); planner reads one ward's records: name the ward to plan with "
            f"history.ward, or export one file per ward"
        )


def check_one_series(rows: Rows) -> None:
    """Refuse daily counts whose kept rows still hold several wards or specialties (a list
    given to history.ward): each would repeat the dates."""
    for name, key, _ in _FILTERS:
        if name in rows.frame and len(found := _found(rows, name)) > 1:
            raise PlannerError(
                f"{rows.source}: {key} keeps {len(found)} {name} values ({_shown(found)}) of "
                f"a daily counts file; give one, or leave out history.admissions to count "
                f"admissions from the episodes"
            )


def admission_methods(rows: Rows, form: HistoryFormat) -> pd.Categorical | None:
    """``planned`` or ``emergency`` for each row, from its method column and the scenario's
    lists (any case); None when the scenario gives no lists. Refuses a value in neither list,
    naming the first line and every such value."""
    if not form.reads_methods:
        return None
    values = rows.frame["method"].str.lower().to_numpy()
    planned = {value.strip().lower() for value in form.planned_methods}
    emergency = {value.strip().lower() for value in form.emergency_methods}
    is_planned = np.isin(values, list(planned))
    unknown = ~is_planned & ~np.isin(values, list(emergency))
    if unknown.any():
        at = rows.first(unknown)
        others = sorted(set(rows.frame["method"].to_numpy()[unknown]))
        raise PlannerError(
            f"{rows.at(at)}: {rows.label('method')} {rows.frame['method'].iloc[at]!r} is in "
            f"neither history.planned_methods nor history.emergency_methods (values not "
            f"listed: {_shown(repr(v) for v in others)}); add each to one of them"
        )
    return pd.Categorical(np.where(is_planned, PLANNED, EMERGENCY), categories=[EMERGENCY, PLANNED])


def still_on_ward(rows: Rows, name: str, form: HistoryFormat) -> np.ndarray:
    """Which rows' ``name`` (a discharge) says the patient is still on the ward (any case);
    refuses an empty one when ``history.still_on_ward`` leaves out \"\"."""
    tokens = {token.strip().lower() for token in form.still_on_ward}
    values = rows.frame[name]
    empty = (values == "").to_numpy()
    if "" not in tokens and empty.any():
        raise PlannerError(
            f"{rows.at(rows.first(empty))}: {rows.label(name)} is empty, and "
            f'history.still_on_ward does not list "" (an empty cell)'
        )
    return values.str.lower().isin(tokens).to_numpy()

"""Reading the scenario tables that define the ward itself: ``[beds]`` (with dated changes)
and ``[staffing]`` (the rota, its overrides), into :class:`WardSettings`. Neither the beds nor
the rota is ever assumed: a scenario without them is refused."""

from __future__ import annotations

from datetime import date
from typing import Any

from planner.errors import PlannerError
from planner.scenario_patients import clock_hours
from planner.schema_checks import table_values
from planner.simulate.settings import (
    BedChange,
    RosterOverride,
    Shift,
    StaffingSettings,
    WardSettings,
)
from planner.simulate.staffing import validate_staffing


def table_items(document: dict[str, Any], name: str) -> list[dict[str, Any]]:
    """The entries of the array of tables ``name`` ("beds.change") of a merged document."""
    root, child = name.split(".")
    return list(document.get(root, {}).get(child, []))


def check_range(where: str, start: date, end: date) -> None:
    """Refuse a dated entry that ends before it starts."""
    if end < start:
        raise PlannerError(f"{where}: end {end} is before start {start}")


def _shifts(document: dict[str, Any]) -> tuple[Shift, ...]:
    items = table_items(document, "staffing.shift")
    shifts = tuple(
        Shift(
            item["name"],
            clock_hours(item["start"]),
            clock_hours(item["end"]),
            float(item["patients_per_nurse"]),
            tuple(item["roster"]),
        )
        for item in items
    )
    return shifts


def read_ward(document: dict[str, Any], where: str) -> WardSettings:
    beds = table_values(document, "beds")
    if beds["base"] is None:
        raise PlannerError(
            f"{where}: beds.base: required: the beds this ward normally has open (no number "
            f"of beds is assumed); give it under [beds] here or in the file this one extends"
        )
    if not table_items(document, "staffing.shift"):
        raise PlannerError(
            f"{where}: staffing.shift: required: the ward's nurse rota as [[staffing.shift]] "
            f"tables (name, start, end, patients_per_nurse, roster; no rota is assumed)"
        )
    changes = []
    for number, item in enumerate(table_items(document, "beds.change"), start=1):
        check_range(f"{where}: beds.change[{number}]", item["start"], item["end"])
        changes.append(BedChange(item["start"], item["end"], item["change"]))
    shifts = _shifts(document)
    names = {shift.name for shift in shifts}
    overrides = []
    for number, item in enumerate(table_items(document, "staffing.override"), start=1):
        at = f"{where}: staffing.override[{number}]"
        check_range(at, item["start"], item["end"])
        if item["shift"] not in names:
            raise PlannerError(
                f"{at}.shift: no shift named {item['shift']!r} (shifts: {', '.join(sorted(names))})"
            )
        overrides.append(RosterOverride(item["start"], item["end"], item["shift"], item["nurses"]))
    staffing = StaffingSettings(
        shifts, table_values(document, "staffing")["minimum_nurses"], tuple(overrides)
    )
    try:
        validate_staffing(staffing)
    except PlannerError as error:
        raise PlannerError(f"{where}: {error}") from None
    return WardSettings(beds["base"], tuple(changes), beds["policy"], staffing)

"""Nurse staffing per shift: which shifts make up the day, who is rostered, who is required.

Pure functions on settings and numpy arrays. Times of day are hours from midnight; a shift
belongs to the day on which it starts (the night shift 19 -> 7 of Monday is Monday's).

Nurses required on a shift = max(minimum_nurses, ceil(peak occupied beds / patients_per_nurse));
a shift is short when required > rostered, and shortfall = max(required - rostered, 0).
"""

from __future__ import annotations

from datetime import date, timedelta

import numpy as np

from planner.errors import PlannerError
from planner.simulate.settings import StaffingSettings

TILING = "shifts must cover the 24 hours exactly once"


def _hours(value: float) -> str:
    """Hours from midnight as HH:MM."""
    minutes = round(value * 60)
    return f"{minutes // 60:02d}:{minutes % 60:02d}"


def validate_staffing(staffing: StaffingSettings) -> None:
    """Raise PlannerError unless the shifts have different names and tile the 24 hours of the
    day without gap or overlap: the rules across shifts that the key table cannot express. Each
    value's own limits (ratios, rosters, hours, nurses) and the shift named by an override are
    checked when the scenario is read (:mod:`planner.schema`, :mod:`planner.scenario`)."""
    shifts = staffing.shifts
    if not shifts:
        raise PlannerError("staffing.shift: at least one shift is needed")
    names = [shift.name for shift in shifts]
    for name in names:
        if names.count(name) > 1:
            raise PlannerError(
                f"staffing.shift: shift names must differ ({name!r} is used more than once)"
            )
    ordered = sorted(shifts, key=lambda shift: shift.start_hour)
    for i, shift in enumerate(ordered):
        following = ordered[(i + 1) % len(ordered)]
        next_start = following.start_hour + (24.0 if i + 1 == len(ordered) else 0.0)
        end = shift.start_hour + shift.length_hours
        if next_start < end:
            raise PlannerError(
                f"staffing.shift: {shift.name!r} ({_hours(shift.start_hour)}-"
                f"{_hours(shift.end_hour)}) overlaps {following.name!r} "
                f"(starts {_hours(following.start_hour)}); {TILING}"
            )
        if next_start > end:
            raise PlannerError(
                f"staffing.shift: hours uncovered, gap between {shift.name!r} (ends "
                f"{_hours(shift.end_hour)}) and {following.name!r} (starts "
                f"{_hours(following.start_hour)}); {TILING}"
            )


def rostered_nurses(staffing: StaffingSettings, start: date, days: int) -> np.ndarray:
    """Registered nurses rostered per day and shift (nurses), shape (days, shifts): the weekday
    roster (Monday..Sunday) with dated overrides applied (a later override wins)."""
    dates = [start + timedelta(days=d) for d in range(days)]
    weekdays = np.array([day.weekday() for day in dates], dtype=np.int64)
    roster = np.array([shift.roster for shift in staffing.shifts], dtype=np.int32).T
    rostered = roster[weekdays] if days else np.zeros((0, len(staffing.shifts)), np.int32)
    column = {shift.name: j for j, shift in enumerate(staffing.shifts)}
    for override in staffing.overrides:
        first = max((override.start - start).days, 0)
        last = min((override.end - start).days, days - 1)
        if first <= last:
            rostered[first : last + 1, column[override.shift]] = override.nurses
    return rostered


def nurses_required(
    peak_occupancy: np.ndarray, patients_per_nurse: np.ndarray, minimum_nurses: int
) -> np.ndarray:
    """Nurses required = max(minimum_nurses, ceil(peak occupied beds / patients_per_nurse)).

    ``patients_per_nurse`` broadcasts against ``peak_occupancy`` (e.g. one value per shift on
    the last axis). Returns nurses as int32.
    """
    ratio = np.asarray(peak_occupancy, dtype=float) / np.asarray(patients_per_nurse, dtype=float)
    # Round away floating noise before the ceiling so that 28 / 4 is exactly 7 nurses.
    needed = np.ceil(np.round(ratio, 9))
    return np.maximum(needed, minimum_nurses).astype(np.int32)


def shortfall(required: np.ndarray, rostered: np.ndarray) -> np.ndarray:
    """Nurses short on a shift: max(required - rostered, 0), int32."""
    gap = np.asarray(required, dtype=np.int64) - np.asarray(rostered, dtype=np.int64)
    return np.maximum(gap, 0).astype(np.int32)

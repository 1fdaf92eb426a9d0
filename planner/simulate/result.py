"""The simulated ward as arrays: one value per path and day, and per path, day and shift.

Both ward engines return a :class:`WardResult`. The measures are numpy arrays with paths on
the first axis, so chunks of paths run separately join by concatenating along that axis
(:meth:`WardResult.concat`), and the weekly and daily summaries read them directly. The tidy
tables of earlier versions (one row per path x day, and per path x day x shift) are built on
demand by the ``daily`` and ``shifts`` properties, with the same columns, dtypes and row order.
"""

from __future__ import annotations

from dataclasses import dataclass, fields
from datetime import date

import numpy as np
import pandas as pd

from planner.simulate.settings import StaffingSettings
from planner.simulate.staffing import nurses_required, rostered_nurses, shortfall

DAILY_COLUMNS = (
    "census", "peak_occupancy", "admissions", "bed_admissions", "discharges",
    "waited", "diverted", "wait_hours", "queue", "planned_admissions", "cancelled", "beds_open",
)  # fmt: skip
#: Daily measures stored per path (beds_open is the same on every path).
PATH_DAILY = tuple(name for name in DAILY_COLUMNS if name != "beds_open")
#: Rows of the engines' integer daily records, in this order (wait hours are kept apart, as
#: floats).
COUNTED = ("census", "peak_occupancy", "admissions", "bed_admissions", "discharges",
           "waited", "diverted", "queue", "planned_admissions", "cancelled")  # fmt: skip
#: Per-shift measures stored per path.
PATH_SHIFTS = ("shift_peak_occupancy", "nurses_required", "shortfall")


@dataclass(frozen=True, eq=False)
class WardResult:
    """Simulated ward for paths ``first_path, first_path + 1, ...`` from ``start``.

    Per path and day, (paths, days) int32 arrays in patients: ``census`` (occupied beds at
    24:00), ``peak_occupancy`` (most occupied beds during the day), ``admissions`` (arrivals
    that day), ``bed_admissions`` (patients given a bed that day), ``discharges``, ``waited``
    (arrivals that day who found no free bed, "wait" policy), ``diverted`` (arrivals that day
    placed elsewhere, "divert" policy), ``queue`` (patients waiting at 24:00),
    ``planned_admissions`` (planned patients given a bed that day), ``cancelled`` (planned
    patients booked that day and cancelled for want of a bed; not counted in ``admissions``);
    ``wait_hours`` (float64, hours waited by that day's arrivals). ``beds_open``: (days,) beds
    open each day.

    Per path, day and shift, (paths, days, shifts) int32 arrays, shifts in the order of
    ``shift_names`` (the staffing settings' order), the shift belonging to the day it starts:
    ``shift_peak_occupancy`` (patients), ``nurses_required`` and ``shortfall`` (nurses);
    ``nurses_rostered``: (days, shifts) nurses. The last overnight shift is cut at the end of
    the window; the overnight shift that began the evening before the window is not reported.
    """

    start: date
    first_path: int
    census: np.ndarray
    peak_occupancy: np.ndarray
    admissions: np.ndarray
    bed_admissions: np.ndarray
    discharges: np.ndarray
    waited: np.ndarray
    diverted: np.ndarray
    wait_hours: np.ndarray
    queue: np.ndarray
    planned_admissions: np.ndarray
    cancelled: np.ndarray
    beds_open: np.ndarray
    shift_names: tuple[str, ...]
    shift_peak_occupancy: np.ndarray
    nurses_required: np.ndarray
    nurses_rostered: np.ndarray
    shortfall: np.ndarray

    @property
    def paths(self) -> int:
        return self.census.shape[0]

    @property
    def days(self) -> int:
        return self.census.shape[1]

    @property
    def dates(self) -> np.ndarray:
        """The days of the window, datetime64[D]."""
        return np.datetime64(self.start, "D") + np.arange(self.days)

    @property
    def daily(self) -> pd.DataFrame:
        """Tidy table, one row per path x day (paths in order, then dates): path, date,
        then the measures of ``DAILY_COLUMNS`` (int32, wait_hours float64). Built on each
        access."""
        paths, days = self.paths, self.days
        frame = {
            "path": np.repeat(self._path_numbers(), days),
            "date": np.tile(self.dates, paths).astype("datetime64[s]"),
        }
        for name in PATH_DAILY:
            frame[name] = getattr(self, name).ravel()
        frame["beds_open"] = np.tile(self.beds_open, paths)
        return pd.DataFrame({name: frame[name] for name in ("path", "date", *DAILY_COLUMNS)})

    @property
    def shifts(self) -> pd.DataFrame:
        """Tidy staffing table, one row per path x day x shift: path, date (day the shift
        starts), shift (categorical, staffing order), peak_occupancy, nurses_required,
        nurses_rostered, shortfall (int32). Built on each access."""
        paths, days, count = self.shift_peak_occupancy.shape
        names = pd.Categorical.from_codes(
            np.tile(np.arange(count), paths * days), categories=list(self.shift_names)
        )
        rostered = np.broadcast_to(self.nurses_rostered, (paths, days, count))
        return pd.DataFrame(
            {
                "path": np.repeat(self._path_numbers(), days * count),
                "date": np.tile(np.repeat(self.dates, count), paths).astype("datetime64[s]"),
                "shift": names,
                "peak_occupancy": self.shift_peak_occupancy.ravel(),
                "nurses_required": self.nurses_required.ravel(),
                "nurses_rostered": rostered.ravel(),
                "shortfall": self.shortfall.ravel(),
            }
        )

    def _path_numbers(self) -> np.ndarray:
        return np.arange(self.first_path, self.first_path + self.paths, dtype=np.int32)

    @classmethod
    def concat(cls, parts: list[WardResult]) -> WardResult:
        """Consecutive chunks of paths (same window and ward) joined into one result."""
        if not parts:
            raise ValueError("concat: need at least one part")
        first = parts[0]
        for before, part in zip(parts[:-1], parts[1:], strict=True):
            if part.first_path != before.first_path + before.paths:
                raise ValueError("concat: parts must be consecutive chunks of paths")
            alike = part.start == first.start and part.shift_names == first.shift_names
            if not alike or not np.array_equal(part.beds_open, first.beds_open):
                raise ValueError("concat: parts must simulate the same ward and window")
        if len(parts) == 1:
            return first
        joined = {
            name: np.concatenate([getattr(part, name) for part in parts])
            for name in (*PATH_DAILY, *PATH_SHIFTS)
        }
        shared = {
            field.name: getattr(first, field.name)
            for field in fields(cls)
            if field.name not in joined
        }
        return cls(**shared, **joined)


def ward_result(
    start: date,
    first_path: int,
    daily: dict[str, np.ndarray],
    beds_open: np.ndarray,
    shift_peak: np.ndarray,
    staffing: StaffingSettings,
) -> WardResult:
    """A ``WardResult`` from the daily measures (``PATH_DAILY``, each (paths, days)), the beds
    open per day and the peak occupied beds per (path, day, shift), shifts in the order of
    ``staffing.shifts``; nurses required, rostered and short follow from the staffing rules
    (:mod:`planner.simulate.staffing`)."""
    peak = np.asarray(shift_peak, dtype=np.int32)
    days = peak.shape[1]
    ratio = np.array([shift.patients_per_nurse for shift in staffing.shifts], dtype=float)
    required = nurses_required(peak, ratio, staffing.minimum_nurses)
    rostered = rostered_nurses(staffing, start, days).astype(np.int32)
    measures = {
        name: np.ascontiguousarray(daily[name], np.float64 if name == "wait_hours" else np.int32)
        for name in PATH_DAILY
    }
    return WardResult(
        start=start,
        first_path=int(first_path),
        **measures,
        beds_open=np.asarray(beds_open, dtype=np.int32),
        shift_names=tuple(shift.name for shift in staffing.shifts),
        shift_peak_occupancy=peak,
        nurses_required=required,
        nurses_rostered=rostered,
        shortfall=shortfall(required, rostered[None]),
    )

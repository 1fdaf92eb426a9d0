"""Planned (elective) admissions: a weekly list of booked patients and/or single bookings, a
stream beside the emergency forecast.

Each day brings the list's number of patients for its weekday, all at the list's admission
time, and the bookings dated that day at their own times; the numbers are known, so every path
has the same planned patients, and only their stays are random (drawn from the planned
patients' own distribution, as durations from the bed time; a booking that states its
expected stay draws from the same distribution rescaled to that mean). A planned patient who
finds no free bed is either cancelled (``when_full = "cancel"``: the booking is lost to this
period and counted) or waits in the ward's queue, first come, first served with the emergency
patients (``"wait"``).
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import date

import numpy as np
import pandas as pd

from planner.errors import PlannerError
from planner.simulate.stays import StayDistribution

WHEN_FULL = ("cancel", "wait")


@dataclass(frozen=True, eq=False)
class PlannedList:
    """``per_weekday``: booked patients each weekday, Monday to Sunday; ``hour``: their
    admission time, hours after 00:00 (0 to 24); ``stays``: their length of stay (days);
    ``when_full``: "cancel" or "wait"; ``bookings``: single bookings (``at`` Timestamp,
    ``expected_stay`` days or NaN), or None."""

    per_weekday: tuple[int, ...]
    hour: float
    stays: StayDistribution
    when_full: str = "cancel"
    bookings: pd.DataFrame | None = None

    def __post_init__(self) -> None:
        counts = tuple(int(n) for n in self.per_weekday)
        if len(counts) != 7 or any(n < 0 for n in counts) or counts != tuple(self.per_weekday):
            raise PlannerError(f"planned list: need 7 whole numbers >= 0, got {self.per_weekday}")
        if not 0.0 <= self.hour < 24.0:
            raise PlannerError(f"planned list: admission hour must be 0 to 24, got {self.hour}")
        if self.when_full not in WHEN_FULL:
            raise PlannerError(
                f"planned when_full must be one of {WHEN_FULL}, got {self.when_full!r}"
            )
        object.__setattr__(self, "per_weekday", counts)

    def counts(self, start: date, days: int) -> np.ndarray:
        """Booked patients on each of ``days`` days from ``start`` (int64)."""
        weekday = (start.weekday() + np.arange(days)) % 7
        return np.asarray(self.per_weekday, dtype=np.int64)[weekday]

    def schedule(self, start: date, days: int) -> tuple[np.ndarray, np.ndarray]:
        """Admission hours (since 00:00 of ``start``) of the planned patients of the ``days``
        days from ``start`` in order (the list's before a booking at the same time), and each
        one's stay factor: a booking's expected stay over the distribution's mean, else 1."""
        hours = np.repeat(24.0 * np.arange(days) + self.hour, self.counts(start, days))
        factor = np.ones(hours.size)
        if self.bookings is not None:
            since = (self.bookings["at"] - pd.Timestamp(start)) / pd.Timedelta(hours=1)
            inside = ((since >= 0) & (since < 24.0 * days)).to_numpy()
            expected = self.bookings["expected_stay"].to_numpy()[inside]
            hours = np.concatenate((hours, since.to_numpy()[inside]))
            factor = np.concatenate((factor, np.where(np.isnan(expected), 1.0,
                                                      expected / self.stays.mean)))  # fmt: skip
        order = np.argsort(hours, kind="stable")
        return hours[order], factor[order]

    def hours(self, start: date, days: int) -> np.ndarray:
        """Admission hours (since 00:00 of ``start``) of the planned patients, in order."""
        return self.schedule(start, days)[0]

    def describe(self) -> str:
        names = ("Mon", "Tue", "Wed", "Thu", "Fri", "Sat", "Sun")
        booked = ", ".join(f"{n} {d}" for d, n in zip(names, self.per_weekday, strict=True) if n)
        hh, mm = divmod(round(self.hour * 60), 60)
        action = "cancelled" if self.when_full == "cancel" else "wait for a bed"
        single = "" if self.bookings is None else f" and {len(self.bookings)} single bookings"
        return (f"{booked or 'none'} at {hh:02d}:{mm:02d}{single}; stays "
                f"{self.stays.describe()}; with no free bed they are {action}")  # fmt: skip

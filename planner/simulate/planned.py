"""Planned (elective) admissions: a weekly list of booked patients, a stream beside the
emergency forecast.

Each day brings the list's number of patients for its weekday, all at the list's admission
time; the numbers are known, so every path has the same planned patients, and only their stays
are random (drawn from the planned patients' own distribution, as durations from the bed
time). A planned patient who finds no free bed is either cancelled (``when_full = "cancel"``:
the booking is lost to this period and counted) or waits in the ward's queue, first come,
first served with the emergency patients (``"wait"``).
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import date

import numpy as np

from planner.errors import PlannerError
from planner.simulate.stays import StayDistribution

WHEN_FULL = ("cancel", "wait")


@dataclass(frozen=True, eq=False)
class PlannedList:
    """``per_weekday``: booked patients each weekday, Monday to Sunday; ``hour``: their
    admission time, hours after 00:00 (0 to 24); ``stays``: their length of stay (days);
    ``when_full``: "cancel" or "wait"."""

    per_weekday: tuple[int, ...]
    hour: float
    stays: StayDistribution
    when_full: str = "cancel"

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

    def hours(self, start: date, days: int) -> np.ndarray:
        """Admission hours (since 00:00 of ``start``) of the booked patients, in order."""
        counts = self.counts(start, days)
        return np.repeat(24.0 * np.arange(days) + self.hour, counts)

    def describe(self) -> str:
        names = ("Mon", "Tue", "Wed", "Thu", "Fri", "Sat", "Sun")
        booked = ", ".join(f"{n} {d}" for d, n in zip(names, self.per_weekday, strict=True) if n)
        hh, mm = divmod(round(self.hour * 60), 60)
        action = "cancelled" if self.when_full == "cancel" else "wait for a bed"
        return (f"{booked or 'none'} at {hh:02d}:{mm:02d}; stays {self.stays.describe()}; "
                f"with no free bed they are {action}")  # fmt: skip

"""Ward settings: what the scenario's ``[beds]``, ``[stay]`` and ``[staffing]`` tables resolve to.

Times of day are hours from midnight (0-24); dates are calendar days; stays are in days.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from datetime import date
from pathlib import Path

from planner.schema import default


@dataclass(frozen=True)
class BedChange:
    """Open (``change`` > 0, e.g. escalation beds) or close (``change`` < 0) beds on every day
    from ``start`` to ``end`` inclusive. Changes take effect at 00:00 of ``start`` and end at
    24:00 of ``end``."""

    start: date
    end: date
    change: int


@dataclass(frozen=True)
class Shift:
    """One shift of the daily rota. ``start_hour``/``end_hour`` in hours from midnight; a shift
    whose end is not after its start runs past midnight (night 19 -> 7). ``roster`` is the
    number of registered nurses rostered on the shift for Monday..Sunday (7 values)."""

    name: str
    start_hour: float
    end_hour: float
    patients_per_nurse: float
    roster: tuple[int, int, int, int, int, int, int]

    @property
    def length_hours(self) -> float:
        return (self.end_hour - self.start_hour) % 24 or 24.0


@dataclass(frozen=True)
class RosterOverride:
    """Roster ``nurses`` on shift ``shift`` for every day from ``start`` to ``end`` inclusive
    (a shift belongs to the day on which it starts)."""

    start: date
    end: date
    shift: str
    nurses: int


@dataclass(frozen=True)
class StaffingSettings:
    # A rota for wards built in code (tests, the Python interface's own models); a scenario
    # file must give its own [[staffing.shift]] tables (planner.scenario refuses one without).
    shifts: tuple[Shift, ...] = (
        Shift("day", 7.0, 19.0, 4.0, (5, 5, 5, 5, 5, 5, 5)),
        Shift("night", 19.0, 7.0, 7.0, (3, 3, 3, 3, 3, 3, 3)),
    )
    minimum_nurses: int = default("staffing.minimum_nurses")
    overrides: tuple[RosterOverride, ...] = ()


@dataclass(frozen=True)
class DischargeSettings:
    """When patients leave (the ``[discharge]`` table). ``timing``: "auto", "calendar" or
    "continuous"; ``earlier_hours``: calendar discharges moved earlier on their day (0-23);
    ``seven_day``: share (0-1) of the way the weekend discharge rates move to the weekdays';
    ``before_noon``: least share (0-1) of each weekday's discharges before 12:00."""

    timing: str = default("discharge.timing")
    earlier_hours: int = default("discharge.earlier_hours")
    seven_day: float = default("discharge.seven_day")
    before_noon: float = default("discharge.before_noon")

    @property
    def levers(self) -> bool:
        """True when a lever changes the learned discharge timing."""
        return self.earlier_hours != 0 or self.seven_day != 0.0 or self.before_noon != 0.0


@dataclass(frozen=True)
class PlannedSettings:
    """The ``[planned]`` table: ``per_weekday`` (7 whole numbers, or None for no planned
    stream), ``admission_hour`` (hours after 00:00), ``when_full`` ("cancel" or "wait"),
    ``stay_mean``/``stay_sd`` (days; None to learn the stays from planned episodes);
    ``bookings``: a file of single bookings, or None."""

    per_weekday: tuple[int, ...] | None = None
    admission_hour: float = 8.0
    when_full: str = default("planned.when_full")
    stay_mean: float | None = None
    stay_sd: float | None = None
    bookings: Path | None = None

    @property
    def given(self) -> bool:
        """True when the scenario has a planned stream (a list or bookings)."""
        return self.per_weekday is not None or self.bookings is not None


@dataclass(frozen=True)
class StaySettings:
    """Length of stay. ``model``: "empirical" (resample the episode stays), "lognormal",
    "gamma", "weibull", "exponential", or "best" (the parametric fit with the lowest AIC).
    ``mean``/``sd`` (days) give the distribution directly instead of fitting it to episodes.
    ``change_days`` (e.g. -0.5) and ``scale`` (e.g. 0.9) change the mean stay; both are applied
    as one rescaling of the whole distribution, which keeps its shape (coefficient of variation).
    """

    model: str = default("stay.model")
    mean: float | None = default("stay.mean")
    sd: float | None = default("stay.sd")
    change_days: float = default("stay.change_days")
    scale: float = default("stay.scale")


@dataclass(frozen=True)
class WardSettings:
    """``beds``: base number of beds open. ``policy``: "wait" (a patient with no free bed waits,
    first come first served, for the next one) or "divert" (placed elsewhere and lost to this
    ward)."""

    beds: int
    bed_changes: tuple[BedChange, ...] = ()
    policy: str = default("beds.policy")
    staffing: StaffingSettings = field(default_factory=StaffingSettings)

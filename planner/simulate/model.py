"""The ward a run simulates, its beds over time, and how the run is carried out.

:class:`WardModel` is built once per plan from the scenario and the ward's records: the beds
over time, the overflow policy and the nurse rota (:class:`WardSettings`), the length of stay
(a duration, or discharges that follow the calendar and the clock), the patients on the ward
when the simulation starts and the hour-of-day profile of emergency arrivals. Every engine
takes it with the forecast paths of daily admissions. A plan that changes only beds or the
rota reuses the same fitted stays with :meth:`WardModel.with_settings`.

:class:`RunOptions` says how a run is carried out (paths, seed, engine, processes, cluster,
progress); the engine, ``jobs`` and the cluster change the run time, never the numbers.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field, replace
from datetime import date, timedelta

import numpy as np

from planner.errors import PlannerError
from planner.schema import choices
from planner.simulate.discharge_fit import DischargeTiming
from planner.simulate.planned import PlannedList
from planner.simulate.settings import WardSettings
from planner.simulate.stays import StayDistribution


@dataclass(frozen=True, eq=False)
class WardModel:
    """The simulated ward. ``start``: first simulated day (the simulation starts at its 00:00);
    ``settings``: beds, dated bed changes, overflow policy and staffing; ``stays``: length of
    stay (days); ``inpatients_elapsed``: days already spent by each patient in a bed at the
    start; ``hour_profile``: share of a day's emergency arrivals in each hour (24 values);
    ``discharges``: None when a stay is a duration from the bed time (drawn from ``stays``),
    else the discharge timing that gives each patient's discharge day and clock time
    (:mod:`planner.simulate.discharge_times`; ``stays`` then only describes the ward);
    ``timing_note``: why stays are durations when calendar timing was asked for by default;
    ``planned``: the weekly list of planned admissions, if any
    (:mod:`planner.simulate.planned`)."""

    start: date
    settings: WardSettings
    stays: StayDistribution
    inpatients_elapsed: np.ndarray = field(default_factory=lambda: np.zeros(0))
    hour_profile: np.ndarray = field(default_factory=lambda: np.full(24, 1 / 24))
    discharges: DischargeTiming | None = None
    timing_note: str = ""
    planned: PlannedList | None = None

    def __post_init__(self) -> None:
        elapsed = np.asarray(self.inpatients_elapsed, dtype=float)
        profile = np.asarray(self.hour_profile, dtype=float)
        if elapsed.ndim != 1 or not np.all(np.isfinite(elapsed)):
            raise PlannerError("inpatients_elapsed must be a 1-D array of finite days")
        if np.any(elapsed < 0):
            raise PlannerError("inpatients_elapsed must be >= 0 days")
        if profile.shape != (24,) or np.any(profile < 0):
            raise PlannerError("hour_profile must be 24 probabilities >= 0")
        if not np.isclose(profile.sum(), 1.0):
            raise PlannerError("hour_profile must sum to 1")
        if self.settings.policy not in choices("beds.policy"):
            policies = ", ".join(choices("beds.policy"))
            raise PlannerError(f"policy must be one of {policies}, got {self.settings.policy!r}")
        object.__setattr__(self, "inpatients_elapsed", elapsed)
        object.__setattr__(self, "hour_profile", profile)

    def with_settings(self, settings: WardSettings) -> WardModel:
        """The same ward (stays, inpatients, arrival hours) with other beds, policy or rota."""
        return replace(self, settings=settings)


@dataclass(frozen=True)
class RunOptions:
    """How a run is carried out. ``paths`` and ``seed``: None for the scenario's; ``engine``:
    "auto", "simpy" or "fast" (None for the scenario's); ``jobs``: processes; ``scheduler``:
    address of a dask.distributed scheduler to run the simulation on; ``progress(done,
    total)``: called as chunks of paths finish."""

    paths: int | None = None
    seed: int | None = None
    engine: str | None = None
    jobs: int = 1
    scheduler: str | None = None
    progress: Callable[[int, int], None] | None = field(default=None, compare=False)

    def with_defaults(self, paths: int, seed: int, engine: str) -> RunOptions:
        """These options with ``paths``, ``seed`` and ``engine`` filled in where not given."""
        return replace(
            self,
            paths=paths if self.paths is None else self.paths,
            seed=seed if self.seed is None else self.seed,
            engine=engine if self.engine is None else self.engine,
        )


def beds_open_by_day(ward: WardSettings, start: date, days: int) -> np.ndarray:
    """Beds open on each of ``days`` days from ``start``: base beds plus the changes in force."""
    if int(ward.beds) != ward.beds or ward.beds < 0:
        raise PlannerError(f"beds must be a whole number >= 0, got {ward.beds!r}")
    beds = np.full(days, int(ward.beds), dtype=np.int64)
    for change in ward.bed_changes:
        first = max((change.start - start).days, 0)
        last = min((change.end - start).days, days - 1)
        if first <= last:
            beds[first : last + 1] += int(change.change)
    if np.any(beds < 0):
        day = start + timedelta(days=int(np.argmax(beds < 0)))
        raise PlannerError(f"bed_changes: beds open would be negative on {day}")
    return beds.astype(np.int32)


def check_arrivals(arrivals: np.ndarray) -> None:
    """Refuse daily arrivals that are not a (paths x days) array of whole numbers >= 0."""
    if arrivals.ndim != 2 or arrivals.shape[1] == 0:
        raise PlannerError("arrivals must be a (paths x days) array with at least one day")
    if np.any(arrivals < 0) or not np.all(arrivals == np.round(arrivals)):
        raise PlannerError("arrivals must be whole numbers >= 0")

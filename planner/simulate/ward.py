"""Ward simulation: beds, admissions and discharges for each forecast path (SimPy).

One simulation per path, in hours since 00:00 of the first day. Each path gets its own child
``SeedSequence`` (path ``i`` uses ``SeedSequence(seed).spawn(...)[i]``), so results do not depend
on how paths are chunked or run in parallel. Within a path, three streams are spawned:
arrival times within days, stays of new patients (drawn in arrival order and given at arrival,
so two ward plans run with the same seed share stays), remaining stays of current inpatients.

Bed rules:
- beds open = ``ward.beds`` + every ``BedChange`` in force that day (00:00 of start to 24:00 of
  end);
- a new patient gets a bed only while occupied beds < beds open;
- when beds close while more patients are in than beds open, nobody is moved: the patient stays
  until discharge and the bed closes then, so occupancy can exceed beds open only this way;
- no free bed: policy "wait" queues the patient (first come, first served; the stay starts when
  a bed is taken), policy "divert" places the patient elsewhere (overflow, lost to this ward).

The window is the days of the arrival paths; patients still in beds or waiting at its end are
counted as such, and a patient still waiting contributes the hours waited up to the end.
For every path: current inpatients + arrivals = discharges + in beds at end + diverted + waiting.
"""

from __future__ import annotations

from collections import deque
from datetime import date, timedelta
from typing import TYPE_CHECKING

import numpy as np
import simpy

from planner.errors import PlannerError
from planner.simulate.arrivals import arrival_times
from planner.simulate.result import PATH_DAILY, WardResult, ward_result
from planner.simulate.settings import WardSettings

if TYPE_CHECKING:
    from planner.simulate.model import WardModel


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


def path_seeds(seed: int | np.random.SeedSequence, paths: int, first_path: int = 0) -> list:
    """Child SeedSequence of each path: path ``first_path + i`` of ``SeedSequence(seed)``."""
    base = seed if isinstance(seed, np.random.SeedSequence) else np.random.SeedSequence(seed)
    return [
        np.random.SeedSequence(base.entropy, spawn_key=(*base.spawn_key, first_path + i))
        for i in range(paths)
    ]


def _run_path(arrival_hours, stay_hours, remaining_hours, beds_open, wait):
    """SimPy loop for one path (times in hours). Returns the patients' bed times (NaN if never
    in a bed), discharge times, ids of patients who waited and who were diverted, and the
    occupancy log (times, occupied beds after each change)."""
    env = simpy.Environment()
    timeout = env.timeout
    arrivals = arrival_hours.tolist()
    stay = stay_hours.tolist()
    bed_hour = [np.nan] * len(arrivals)
    discharged, waited, diverted, queue = [], [], [], deque()
    occupied = len(remaining_hours)
    log_hour, log_level = [-1.0], [occupied]  # the level before time 0
    beds = int(beds_open[0])
    following = 0

    def discharge(_event):
        nonlocal occupied
        now = env.now
        discharged.append(now)
        if queue and occupied <= beds:
            patient = queue.popleft()  # the freed bed goes straight to the head of the queue
            bed_hour[patient] = now
            timeout(stay[patient]).callbacks.append(discharge)
        else:
            occupied -= 1
            log_hour.append(now)
            log_level.append(occupied)

    def arrive(_event):
        nonlocal occupied, following
        patient = following
        following += 1
        now = arrivals[patient]  # exact, where env.now may differ by rounding of the gaps
        if occupied < beds:
            occupied += 1
            log_hour.append(now)
            log_level.append(occupied)
            bed_hour[patient] = now
            timeout(stay[patient]).callbacks.append(discharge)
        elif wait:
            waited.append(patient)
            queue.append(patient)
        else:
            diverted.append(patient)
        if following < len(arrivals):
            timeout(arrivals[following] - now).callbacks.append(arrive)

    def change_beds(event):
        nonlocal beds, occupied
        beds = event.value
        while queue and occupied < beds:
            occupied += 1
            log_hour.append(env.now)
            log_level.append(occupied)
            patient = queue.popleft()
            bed_hour[patient] = env.now
            timeout(stay[patient]).callbacks.append(discharge)

    for hours in remaining_hours.tolist():
        timeout(hours).callbacks.append(discharge)
    for day in np.flatnonzero(np.diff(beds_open)) + 1:
        timeout(24.0 * day, int(beds_open[day])).callbacks.append(change_beds)
    if arrivals:
        timeout(arrivals[0]).callbacks.append(arrive)
    env.run(until=24.0 * len(beds_open))
    return (
        np.array(bed_hour),
        np.array(discharged),
        np.array(waited, dtype=np.int64),
        np.array(diverted, dtype=np.int64),
        np.array(log_hour),
        np.array(log_level),
    )


def _levels_and_peaks(times, levels, boundaries):
    """Level just before each boundary and the peak level in each interval [b_k, b_k+1), for a
    step function that takes ``levels[k]`` from ``times[k]`` on (times sorted, times[0] < 0).
    An event exactly at a boundary (beds opening at 00:00) counts in the interval it starts."""
    index = np.searchsorted(times, boundaries, side="left") - 1
    within = np.maximum.reduceat(levels[: index[-1] + 1], index[:-1])
    return levels[index], np.maximum(within, levels[index[1:]])


def check_arrivals(arrivals: np.ndarray) -> None:
    """Refuse daily arrivals that are not a (paths x days) array of whole numbers >= 0."""
    if arrivals.ndim != 2 or arrivals.shape[1] == 0:
        raise PlannerError("arrivals must be a (paths x days) array with at least one day")
    if np.any(arrivals < 0) or not np.all(arrivals == np.round(arrivals)):
        raise PlannerError("arrivals must be whole numbers >= 0")


def simulate_ward(
    arrivals: np.ndarray,
    model: WardModel,
    seed: int | np.random.SeedSequence,
    *,
    first_path: int = 0,
) -> WardResult:
    """Simulate ``model`` for every path of daily ``arrivals`` (paths x days, patients).

    The model's stays give ``sample(rng, size)`` and ``sample_remaining(rng, elapsed)``
    (days); its patients on the ward at the start keep their beds until their remaining stays
    end. ``first_path``: number of the first path, so that chunks of paths run separately give
    the same result as one run. The same ``seed`` gives the same result.
    """
    arrivals = np.asarray(arrivals)
    check_arrivals(arrivals)
    ward, stays, start = model.settings, model.stays, model.start
    elapsed, profile = model.inpatients_elapsed, model.hour_profile
    arrivals = arrivals.astype(np.int64)
    paths, days = arrivals.shape
    horizon = 24.0 * days
    beds = beds_open_by_day(ward, start, days)
    shifts = ward.staffing.shifts
    order = np.argsort([shift.start_hour for shift in shifts], kind="stable")
    starts = np.array([shifts[j].start_hour for j in order])
    shift_bounds = np.append((24.0 * np.arange(days)[:, None] + starts).ravel(), horizon)
    day_bounds = 24.0 * np.arange(days + 1)
    daily = {name: np.zeros((paths, days), dtype=np.float64) for name in PATH_DAILY}
    shift_peak = np.zeros((paths, days, len(shifts)), dtype=np.int32)

    def day_of(hours):
        return np.minimum((hours // 24.0).astype(np.int64), days - 1)

    def per_day(hours_or_days, weights=None):
        return np.bincount(hours_or_days, weights=weights, minlength=days)

    for i, path_seed in enumerate(path_seeds(seed, paths, first_path)):
        arrival_seed, stay_seed, remaining_seed = path_seed.spawn(3)
        counts = arrivals[i]
        total = int(counts.sum())
        hours = np.asarray(
            arrival_times(np.random.default_rng(arrival_seed), counts, profile) if total else [],
            dtype=float,
        )
        stay_hours = 24.0 * np.asarray(stays.sample(np.random.default_rng(stay_seed), total))
        remaining = (
            24.0
            * np.asarray(stays.sample_remaining(np.random.default_rng(remaining_seed), elapsed))
            if elapsed.size
            else np.zeros(0)
        )
        bed_hour, discharged, waited, diverted, log_hour, log_level = _run_path(
            hours, stay_hours, remaining, beds, ward.policy == "wait"
        )
        arrival_day = np.repeat(np.arange(days), counts)
        in_bed = ~np.isnan(bed_hour)
        from_queue = waited[in_bed[waited]]
        waited_until = np.where(in_bed[waited], bed_hour[waited], horizon)
        at_midnight, daily["peak_occupancy"][i] = _levels_and_peaks(log_hour, log_level, day_bounds)
        daily["census"][i] = at_midnight[1:]
        daily["admissions"][i] = counts
        daily["bed_admissions"][i] = per_day(day_of(bed_hour[in_bed]))
        daily["discharges"][i] = per_day(day_of(discharged))
        daily["waited"][i] = per_day(arrival_day[waited])
        daily["diverted"][i] = per_day(arrival_day[diverted])
        daily["wait_hours"][i] = per_day(arrival_day[waited], waited_until - hours[waited])
        daily["queue"][i] = np.cumsum(daily["waited"][i]) - np.cumsum(
            per_day(day_of(bed_hour[from_queue]))
        )
        _, peaks = _levels_and_peaks(log_hour, log_level, shift_bounds)
        shift_peak[i][:, order] = peaks.reshape(days, len(shifts))
    return ward_result(start, first_path, daily, beds, shift_peak, ward.staffing)

"""Ward simulation: beds, admissions and discharges for each forecast path (SimPy).

One SimPy environment per path, in hours since 00:00 of the first day. The random inputs
(arrival hours, stays, remaining stays of the patients on the ward at the start) are drawn
beforehand by :func:`planner.simulate.sampling.draw_inputs`, as for the fast engine; the model
draws no random number itself, so a result depends on the seed only through those inputs.

The model, per path:
- beds are a ``simpy.PriorityResource`` whose capacity is the most beds open on any day of the
  window (at least the patients on the ward at the start, and at least 1);
- the bed-change process holds the beds closed on a day with closure requests (priority 0,
  before any patient), issued at 00:00 of the day beds open fall and released, or cancelled
  while still waiting, at 00:00 of the day they rise; a closure that finds every bed taken by
  a patient waits at the head of the queue and takes the bed when its patient leaves;
- each patient on the ward at the start holds a bed from time 0 and leaves after the remaining
  stay; each new patient arrives at the drawn hour, asks for a bed (priority 1, first come,
  first served) and leaves a stay after getting one;
- the patient processes log the occupied beds (patients only, never closures) as they change;
  the daily and shift measures are read from that log afterwards.

Bed rules:
- beds open = ``ward.beds`` + every ``BedChange`` in force that day (00:00 of start to 24:00 of
  end);
- a new patient gets a bed only while occupied beds < beds open;
- when beds close while more patients are in than beds open, nobody is moved: the patient stays
  until discharge and the bed closes then, so occupancy can exceed beds open only this way;
- no free bed (every bed taken by a patient or a closure, or a closure still waiting): policy
  "wait" queues the patient (first come, first served; the stay starts when a bed is taken),
  policy "divert" places the patient elsewhere (overflow, lost to this ward).

The window is the days of the arrival paths; patients still in beds or waiting at its end are
counted as such, and a patient still waiting contributes the hours waited up to the end.
For every path: current inpatients + arrivals = discharges + in beds at end + diverted + waiting.
"""

from __future__ import annotations

import numpy as np
import simpy

from planner.simulate.discharge_times import discharge_at, tables_for
from planner.simulate.model import WardModel, beds_open_by_day, check_arrivals
from planner.simulate.result import PATH_DAILY, WardResult, ward_result
from planner.simulate.sampling import DrawnInputs, draw_inputs

#: Request priorities: a closure goes before every waiting patient.
CLOSURE, PATIENT = 0, 1


def _run_path(arrival_hours, stay_hours, remaining_days, beds_open, rules):
    """Run one path in SimPy until the end of the window (hours). ``stay_hours(number, now)``:
    hours from taking a bed at ``now`` to the discharge of new patient ``number``; ``rules``:
    (True for policy "divert", the planned flag of each new patient or None, True when a
    planned patient with no free bed is cancelled).

    Returns the occupancy log (hours and changes in occupied beds, +1 or -1, after a first
    entry at hour -1 holding the patients in beds at the start) and the patients (numbered in
    arrival order) who: waited for a bed, were given one from the queue (with the hours they
    got it), were diverted, were cancelled; and the hours planned patients got their beds."""
    divert, planned, cancel = rules
    env = simpy.Environment()
    capacity = max(int(beds_open.max()), len(remaining_days), 1)
    beds = simpy.PriorityResource(env, capacity)
    timeout, request, release = env.timeout, beds.request, beds.release
    users, queue = beds.users, beds.queue
    log_hour, log_change = [-1.0], [len(remaining_days)]
    logged, changed = log_hour.append, log_change.append
    no_bed, from_queue, bed_hour, diverted, cancelled, planned_beds = [], [], [], [], [], []

    def inpatient(env, hours):
        bed = request(PATIENT)  # granted at once: the first requests, and capacity suffices
        yield timeout(hours)
        logged(env.now)
        changed(-1)
        release(bed)

    def patient(env, number, arrive):
        yield timeout(arrive)  # from time 0, so env.now is the drawn hour exactly
        booked = planned is not None and planned[number]
        if len(users) >= capacity or queue:  # every bed taken, or a closure waits
            if booked and cancel:
                cancelled.append(number)
                return
            if divert and not booked:
                diverted.append(number)
                return
        bed = request(PATIENT)
        if not bed.triggered:  # no free bed: wait in the queue, first come, first served
            no_bed.append(number)
            yield bed
            from_queue.append(number)
            bed_hour.append(env.now)
        if booked:
            planned_beds.append(env.now)
        logged(env.now)
        changed(1)
        yield timeout(stay_hours(number, env.now))
        logged(env.now)
        changed(-1)
        release(bed)

    closures = []  # granted ones first: closures are served in the order issued

    def change_beds(env, day, closed):
        if day:
            yield timeout(24.0 * day)  # from time 0: exactly 24 d
        while len(closures) < closed:
            closures.append(request(CLOSURE))
        while len(closures) > closed:
            closure = closures.pop()
            if closure.triggered:
                release(closure)
            else:
                closure.cancel()

    process = env.process
    days = np.concatenate([[0], np.flatnonzero(np.diff(beds_open)) + 1]).tolist()
    changes = [(day, capacity - int(beds_open[day])) for day in days]
    # Later changes are scheduled first, so at 00:00 a bed change comes before any discharge
    # at that same moment (as in the fast engine); the first day's closures come after the
    # patients on the ward have taken their beds.
    for day, closed in changes[1:]:
        process(change_beds(env, day, closed))
    for hours in (24.0 * remaining_days).tolist():
        process(inpatient(env, hours))
    process(change_beds(env, *changes[0]))
    for number, arrive in enumerate(arrival_hours.tolist()):
        process(patient(env, number, arrive))
    env.run(until=24.0 * beds_open.size)
    return (log_hour, log_change), (no_bed, from_queue, bed_hour, diverted, cancelled,
                                    planned_beds)  # fmt: skip


def _levels_and_peaks(times, levels, boundaries):
    """Level just before each boundary and the peak level in each interval [b_k, b_k+1), for a
    step function that takes ``levels[k]`` from ``times[k]`` on (times sorted, times[0] < 0).
    An event exactly at a boundary (beds opening at 00:00) counts in the interval it starts."""
    index = np.searchsorted(times, boundaries, side="left") - 1
    within = np.maximum.reduceat(levels[: index[-1] + 1], index[:-1])
    return levels[index], np.maximum(within, levels[index[1:]])


def _stay_hours(inputs: DrawnInputs, i: int, tables):
    """``stay_hours(number, now)`` of the block's path ``i`` (see :func:`_run_path`): the
    drawn stay, or with calendar discharges (``tables`` not None) for an emergency patient the
    time to the discharge drawn for a bed taken at ``now``
    (:func:`planner.simulate.discharge_times.discharge_at`)."""
    lo, hi = inputs.offsets[i], inputs.offsets[i + 1]
    stays = (24.0 * inputs.stay_days[lo:hi]).tolist()
    if tables is None:
        return lambda number, now: stays[number]
    day_u, clock_u = inputs.stay_days[lo:hi].tolist(), inputs.clock_uniforms[lo:hi].tolist()
    planned = inputs.planned[lo:hi].tolist() if inputs.planned.size else [0] * (hi - lo)

    def stay_hours(number, now):
        if planned[number]:
            return stays[number]
        return discharge_at(now, day_u[number], clock_u[number], tables) - now

    return stay_hours


def simulate_drawn(inputs: DrawnInputs, model: WardModel, days: int) -> WardResult:
    """Simulate ``model`` over ``days`` days for every path of ``inputs`` (arrival hours,
    stays and remaining stays drawn by :func:`planner.simulate.sampling.draw_inputs`), one
    SimPy run per path. Draws no random number: the same inputs give the same result."""
    ward, start = model.settings, model.start
    paths, horizon = inputs.paths, 24.0 * days
    beds = beds_open_by_day(ward, start, days)
    shifts = ward.staffing.shifts
    order = np.argsort([shift.start_hour for shift in shifts], kind="stable")
    starts = np.array([shifts[j].start_hour for j in order])
    shift_bounds = np.append((24.0 * np.arange(days)[:, None] + starts).ravel(), horizon)
    day_bounds = 24.0 * np.arange(days + 1)
    daily = {name: np.zeros((paths, days), dtype=np.float64) for name in PATH_DAILY}
    shift_peak = np.zeros((paths, days, len(shifts)), dtype=np.int32)
    divert = ward.policy == "divert"

    def day_of(hours):
        return np.minimum((np.asarray(hours) // 24.0).astype(np.int64), days - 1)

    def per_day(day, weights=None):
        return np.bincount(day, weights=weights, minlength=days)

    tables = None
    if model.discharges is not None:
        tables = tables_for(model.discharges, model.start.weekday()).arrays()
    planned = inputs.planned
    cancel = model.planned is not None and model.planned.when_full == "cancel"
    for i in range(paths):
        hours, _, remaining_days = inputs.path(i)
        lo, hi = inputs.offsets[i], inputs.offsets[i + 1]
        rules = (divert, planned[lo:hi].astype(bool).tolist() if planned.size else None, cancel)
        log, fates = _run_path(hours, _stay_hours(inputs, i, tables), remaining_days, beds, rules)
        no_bed, from_queue, bed_hour, diverted, cancelled, planned_beds = (
            np.array(fate, dtype=float if k in (2, 5) else np.int64) for k, fate in enumerate(fates)
        )
        log_hour, log_change = np.array(log[0]), np.array(log[1])
        levels = np.cumsum(log_change)
        at_midnight, daily["peak_occupancy"][i] = _levels_and_peaks(log_hour, levels, day_bounds)
        daily["census"][i] = at_midnight[1:]
        arrival_day = day_of(hours)
        came = np.ones(hours.size, dtype=bool)
        came[cancelled] = False
        daily["admissions"][i] = per_day(arrival_day[came])
        daily["bed_admissions"][i] = per_day(day_of(log_hour[1:][log_change[1:] > 0]))
        daily["discharges"][i] = per_day(day_of(log_hour[1:][log_change[1:] < 0]))
        daily["diverted"][i] = per_day(arrival_day[diverted])
        daily["waited"][i] = per_day(arrival_day[no_bed])
        daily["cancelled"][i] = per_day(arrival_day[cancelled])
        daily["planned_admissions"][i] = per_day(day_of(planned_beds))
        # Waited until given a bed, or until the end of the window.
        waited_until = np.full(hours.size, horizon)
        waited_until[from_queue] = bed_hour
        daily["wait_hours"][i] = per_day(arrival_day[no_bed], (waited_until - hours)[no_bed])
        given = np.cumsum(per_day(day_of(bed_hour)))
        daily["queue"][i] = np.cumsum(daily["waited"][i]) - given
        _, peaks = _levels_and_peaks(log_hour, levels, shift_bounds)
        shift_peak[i][:, order] = peaks.reshape(days, len(shifts))
    return ward_result(start, inputs.first_path, daily, beds, shift_peak, ward.staffing)


def simulate_ward(
    arrivals: np.ndarray,
    model: WardModel,
    seed: int | np.random.SeedSequence,
    *,
    first_path: int = 0,
) -> WardResult:
    """Simulate ``model`` for every path of daily ``arrivals`` (paths x days, patients).

    The random inputs of path ``first_path + i`` come from its own stream of ``seed``
    (:func:`planner.simulate.sampling.draw_inputs`), so chunks of paths run separately give
    the same result as one run, and the same ``seed`` gives the same result. The patients on
    the ward at the start keep their beds until their remaining stays end.
    """
    arrivals = np.asarray(arrivals)
    check_arrivals(arrivals)
    inputs = draw_inputs(model, arrivals.astype(np.int64), seed, first_path)
    return simulate_drawn(inputs, model, arrivals.shape[1])

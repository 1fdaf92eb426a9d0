"""The SimPy hospital model: the rules of :mod:`planner.hospital.model` as SimPy processes.

The reference for :mod:`planner.hospital.fast`, clarity first: one SimPy environment per path,
in hours since 00:00 of the first day, reading :class:`planner.hospital.sampling.HospitalInputs`
(it draws nothing). Each ward's beds are a ``simpy.PriorityResource``; as in
:mod:`planner.simulate.ward`, bed-change processes hold the closed beds with closure requests
that go before any patient, so a closure that finds every bed taken takes the next bed freed
(rule 1). New patients are processes: each arrives, is placed by the arrival rules or waits on
its own event, holds its bed for its stay and leaves. The dispatcher, plain functions called
when a bed frees and at 00:00, applies rules 2-5 of a freed bed; it decides at once and asks
for beds on the patients' behalf, so no bed is given twice within one instant. Patients in
beds, outliers hosted and patients waiting are logged per ward; the 24:00 levels and the day
and shift peaks are read from the logs afterwards. At equal times the process made first goes
first: the 00:00 processes before the patients, new patients in the joined order of arrival.
"""

from __future__ import annotations

import numpy as np
import simpy

from planner.hospital.model import HospitalModel
from planner.hospital.result import COUNTED, HospitalResult, hospital_result
from planner.hospital.sampling import HospitalInputs, draw_hospital
from planner.hospital.simpy_wards import CLOSURE, PATIENT, ROW, Path, Patient, Ward
from planner.simulate.discharge_times import discharge_at, tables_for
from planner.simulate.model import beds_open_by_day, check_arrivals


def patient(env, path: Path, me: Patient, stay_hours):
    """A new patient: arrives, is placed by the arrival rules (or waits on its event until
    the dispatcher gives it a bed), stays ``stay_hours(me, bed hour)`` and leaves."""
    yield env.timeout(me.arrival)  # from time 0, so env.now is the drawn hour exactly
    if not path.arrive(me):
        return
    if me.bed is None:
        yield me.called
    yield me.bed  # at once, or once a closure waiting before it has taken its bed
    yield env.timeout(stay_hours(me, env.now))
    path.leave(me)


def inpatient(env, path: Path, me: Patient, hours: float):
    """A patient on the ward at the start: holds a bed from time 0 for ``hours``."""
    me.ward, me.bed = me.home, path.wards[me.home].beds.request(PATIENT)
    yield env.timeout(hours)
    path.leave(me)


def change_beds(env, ward: Ward, day: int, closed: int):
    """From 00:00 of ``day``, ``closed`` of the ward's beds are closed (closure requests)."""
    if day:
        yield env.timeout(24.0 * day)  # from time 0: exactly 24 d
    while len(ward.closures) < closed:
        ward.closures.append(ward.beds.request(CLOSURE))
    while len(ward.closures) > closed:
        closure = ward.closures.pop()  # waiting ones last: closures are served in order
        if closure.triggered:
            ward.beds.release(closure)
        else:
            closure.cancel()


def midnight(env, path: Path, day: int):
    """00:00 of ``day``, after its bed changes: each ward in order fills its free beds by rules
    2-4 of a freed bed, one at a time, while someone takes one."""
    yield env.timeout(24.0 * day)
    for v, ward in enumerate(path.wards):
        while ward.free():
            before = ward.occupied.now
            path.bed_freed(v)
            if ward.occupied.now <= before:
                break


def _stay_function(inputs: HospitalInputs, model: HospitalModel):
    """``stay_hours(patient, bed_hour)``: the drawn stay, or with the home ward's calendar
    discharges, for an emergency patient, the time to the discharge drawn for a bed taken
    at ``bed_hour`` (:func:`planner.simulate.discharge_times.discharge_at`)."""
    weekday = model.start.weekday()
    tables = [None if m.discharges is None else tables_for(m.discharges, weekday).arrays()
              for m in model.wards]  # fmt: skip
    stays = (24.0 * inputs.stay_days).tolist()
    day_u, clock_u = inputs.stay_days.tolist(), inputs.clock_uniforms.tolist()

    def stay_hours(me: Patient, now: float) -> float:
        table = tables[me.home]
        if table is None or me.planned:
            return stays[me.number]
        return discharge_at(now, day_u[me.number], clock_u[me.number], table) - now

    return stay_hours


def _run_path(inputs: HospitalInputs, i: int, model: HospitalModel, beds, records, stay_hours):
    """Simulate the block's path ``i`` and write its records (row ``i`` of each)."""
    counts, wait_hours, outlier_hours, peaks, between = (array[i] for array in records)
    wards, days = beds.shape
    env = simpy.Environment()
    path = Path(env, model, beds, np.bincount(inputs.inpatient_ward, minlength=wards),
                (counts, between))  # fmt: skip
    process = env.process
    for day in range(1, days):  # made first: first at 00:00
        for w, ward in enumerate(path.wards):
            if beds[w, day] != beds[w, day - 1]:
                process(change_beds(env, ward, day, ward.capacity - int(beds[w, day])))
        process(midnight(env, path, day))
    remaining = (24.0 * inputs.remaining_days[i]).tolist()
    for w, hours in zip(inputs.inpatient_ward.tolist(), remaining, strict=True):
        process(inpatient(env, path, Patient(w, 0.0, False, -1), hours))
    for w, ward in enumerate(path.wards):  # after the patients on the wards took their beds
        process(change_beds(env, ward, 0, ward.capacity - int(beds[w, 0])))
    lo, hi = inputs.offsets[i], inputs.offsets[i + 1]
    planned = inputs.planned[lo:hi].tolist() if inputs.planned.size else [0] * (hi - lo)
    joined = zip(inputs.ward[lo:hi].tolist(), inputs.arrival_hours[lo:hi].tolist(), planned,
                 range(lo, hi), strict=True)  # fmt: skip
    for w, hour, booked, number in joined:
        process(patient(env, path, Patient(w, hour, bool(booked), number), stay_hours))
    env.run(until=24.0 * days)
    _read_logs(path, model, 24.0 * days, (counts, wait_hours, outlier_hours, peaks))


def _read_logs(path: Path, model: HospitalModel, horizon: float, records) -> None:
    """The 24:00 levels, the day and shift peaks, the hours waited (by ward, in order of
    arrival) and outlying (in order of placing) of a finished path."""
    counts, wait_hours, outlier_hours, peaks = records
    days = counts.shape[1]
    midnights = 24.0 * np.arange(days + 1)
    for w, ward in enumerate(path.wards):
        census, counts[w, :, ROW["peak_occupancy"]] = ward.occupied.read(midnights)
        counts[w, :, ROW["census"]] = census[1:]
        counts[w, :, ROW["queue"]] = ward.waiting.read(midnights)[0][1:]
        counts[w, :, ROW["outliers_on_ward"]] = ward.hosted.read(midnights)[0][1:]
        starts = np.sort([shift.start_hour for shift in model.wards[w].settings.staffing.shifts])
        bounds = np.append((24.0 * np.arange(days)[:, None] + starts).ravel(), horizon)
        peaks[w, :, : starts.size] = ward.occupied.read(bounds)[1].reshape(days, starts.size)
        for me in ward.waited:
            waited = (horizon if me.bed_hour is None else me.bed_hour) - me.arrival
            wait_hours[w, int(me.arrival // 24.0)] += waited
        for me in ward.placed:
            outlied = (horizon if me.ended is None else me.ended) - me.placed_at
            outlier_hours[w, int(me.placed_at // 24.0)] += outlied


def simulate_drawn(inputs: HospitalInputs, model: HospitalModel, days: int) -> HospitalResult:
    """Simulate ``model`` over ``days`` days for every path of ``inputs``, one SimPy run per
    path. Draws no random number: the same inputs give the same result."""
    beds = np.array([beds_open_by_day(m.settings, m.start, days) for m in model.wards])
    shifts = max(len(m.settings.staffing.shifts) for m in model.wards)
    paths, wards = inputs.paths, len(model.wards)
    records = (np.zeros((paths, wards, days, len(COUNTED)), dtype=np.int32),
               np.zeros((paths, wards, days)), np.zeros((paths, wards, days)),
               np.zeros((paths, wards, days, shifts), dtype=np.int32),
               np.zeros((paths, wards, wards), dtype=np.int32))  # fmt: skip
    stay_hours = _stay_function(inputs, model)
    for i in range(inputs.paths):
        _run_path(inputs, i, model, beds, records, stay_hours)
    counts, wait_hours, outlier_hours, peaks, between = records
    ward_first = (np.ascontiguousarray(counts.transpose(1, 3, 0, 2)),
                  np.ascontiguousarray(wait_hours.transpose(1, 0, 2)),
                  np.ascontiguousarray(outlier_hours.transpose(1, 0, 2)),
                  np.ascontiguousarray(peaks.transpose(1, 0, 2, 3)), between)  # fmt: skip
    return hospital_result(model, inputs.first_path, beds, ward_first)


def simulate_hospital(
    arrivals: list[np.ndarray], model: HospitalModel, seed, *, first_path: int = 0
) -> HospitalResult:
    """Simulate ``model`` for every path of the wards' daily ``arrivals`` (each (paths x days),
    hospital order), ward w's inputs from its own seed (:mod:`planner.hospital.sampling`): the
    arguments and result of :func:`planner.hospital.fast.simulate_hospital_fast`."""
    arrivals = [np.asarray(counts) for counts in arrivals]
    for counts in arrivals:
        check_arrivals(counts)
    inputs = draw_hospital(model, arrivals, seed, first_path)
    return simulate_drawn(inputs, model, arrivals[0].shape[1])

"""The fast hospital engine: the rules of :mod:`planner.hospital.model` as a compiled loop.

Each path is an event loop over the joined arrivals of every ward, one heap of discharge times
(each entry naming its patient, whose ward is looked up when it leaves, so a patient who moves
home needs no change to the heap) and the record boundaries (00:00 of every day, and the start
of every ward's shifts). Per ward it keeps the occupied beds, a first-come-first-served queue,
and the ward's patients outlying elsewhere in the order they were placed (for moving back;
those discharged, moved or placed too long ago are skipped as they reach the front).

A ward with no outlying links follows exactly the steps of the one-ward engine
(:mod:`planner.simulate.fast`), so it gets the same numbers from the same inputs.
"""

from __future__ import annotations

import numpy as np

from planner.hospital.result import COUNTED, HospitalResult, hospital_result
from planner.hospital.sampling import HospitalInputs, draw_hospital
from planner.simulate.compiled import compiled, compiled_inline
from planner.simulate.discharge_times import discharge_at, tables_for
from planner.simulate.fast import BLOCK_PATIENTS
from planner.simulate.model import beds_open_by_day, check_arrivals

# Rows of the daily counts, in the order of COUNTED.
_CENSUS, _PEAK, _ADMISSIONS, _BED_ADMISSIONS, _DISCHARGES, _WAITED, _DIVERTED, _QUEUE = range(8)
_PLANNED, _CANCELLED, _PLACED, _HOSTED, _MOVED_BACK, _MOVED_OUT, _CANCELLED_OUTLIERS = range(8, 15)
_OUTLIERS_ON_WARD = 15
# Columns of the per-ward state: occupied beds, beds open, queue head and tail, outlier list
# head and tail, outliers hosted, the day's and the shift's peaks, the shift interval.
_LEVEL, _BEDS, _QHEAD, _QTAIL, _FHEAD, _FTAIL, _HOSTING, _DAY_PEAK, _SHIFT_LEVEL = range(9)
_INTERVAL = 9


@compiled
def _push_patient(heap, who, size, value, patient):  # pragma: no cover - compiled
    """Add ``value`` (a discharge hour) for ``patient`` to the 4-ary min-heap ``heap[:size]``
    with ``who`` alongside; returns the new size."""
    i = size
    while i > 0:
        parent = (i - 1) >> 2
        if heap[parent] <= value:
            break
        heap[i] = heap[parent]
        who[i] = who[parent]
        i = parent
    heap[i] = value
    who[i] = patient
    return size + 1


@compiled
def _pop_patient(heap, who, size):  # pragma: no cover - compiled
    """Remove the smallest entry of the heap (and its patient); returns the new size."""
    size -= 1
    if size == 0:
        return 0
    last, last_who = heap[size], who[size]
    i = 0
    while True:
        first = 4 * i + 1
        if first >= size:
            break
        smallest, value = first, heap[first]
        for child in range(first + 1, min(first + 4, size)):
            if heap[child] < value:
                smallest, value = child, heap[child]
        if value >= last:
            break
        heap[i] = value
        who[i] = who[smallest]
        i = smallest
    heap[i] = last
    who[i] = last_who
    return size


@compiled_inline
def _calendar_leave(bed_hour, u, v, tables):  # pragma: no cover - compiled
    """The drawn discharge time with calendar discharges, as bed hour plus the time to it
    (as the one-ward engine and the SimPy model's timeout make it)."""
    return bed_hour + (discharge_at(bed_hour, u, v, tables) - bed_hour)


@compiled_inline
def _raise_peaks(st, v):  # pragma: no cover - compiled
    if st[v, _LEVEL] > st[v, _DAY_PEAK]:
        st[v, _DAY_PEAK] = st[v, _LEVEL]
    if st[v, _LEVEL] > st[v, _SHIFT_LEVEL]:
        st[v, _SHIFT_LEVEL] = st[v, _LEVEL]


@compiled
def _simulate_block(inputs, ward, links, records, tables):  # pragma: no cover - compiled
    """Simulate every path of a block (the tuples are described in :func:`_arguments`).

    One loop per path. Each pass takes one step: a record boundary, one bed of the beds that
    opened at 00:00 (ward after ward), a discharge or an arrival; what it leaves to settle
    (a patient to put in a bed, a bed freed with its occupant still counted) is settled at the
    end of the pass by the rules of :mod:`planner.hospital.model`, in one place. The state
    lives in plain arrays of the loop (no per-event calls but the heap's), which keeps the
    cost per patient near the one-ward engine's."""
    offsets, hours, homes, stays, clock, planned, remaining, inpatient_ward = inputs
    beds_open, starts, nshifts, wait, cancel, calendar = ward
    hosts, nhosts, linked, nlinked, move_back, limit = links
    counts, wait_hours, outlier_hours, shift_peak, between = records
    wards, days = beds_open.shape
    paths = offsets.size - 1
    horizon = 24.0 * days
    some_planned = planned.size > 0
    most = 1
    for p in range(paths):
        most = max(most, offsets[p + 1] - offsets[p])
    inpatients = remaining.shape[1]
    heap = np.empty(most + inpatients)
    who = np.empty(most + inpatients, dtype=np.int64)  # the patient of each heap entry
    loc = np.empty(most + inpatients, dtype=np.int64)  # ward of each patient's bed, -1 gone
    listed = np.empty(most + inpatients, dtype=np.int64)  # an outlier's place in its list
    st = np.zeros((wards, 10), dtype=np.int64)
    fifo = np.empty((wards, most), dtype=np.int64)  # each ward's outliers in order placed
    placed_at = np.empty((wards, most))
    placed_day = np.empty((wards, most), dtype=np.int64)
    ended = np.empty((wards, most))  # when each outlier left the host ward
    queue = np.empty((wards, most), dtype=np.int64)  # waiting patients, first come first
    queue_day = np.empty((wards, most), dtype=np.int64)
    waits = np.empty((wards, most))
    following = np.empty(wards)
    for p in range(paths):
        lo, hi = offsets[p], offsets[p + 1]
        st[:, :] = 0
        size = 0
        for r in range(inpatients):
            size = _push_patient(heap, who, size, 24.0 * remaining[p, r], r)
            loc[r] = inpatient_ward[r]
            listed[r] = -1
            st[inpatient_ward[r], _LEVEL] += 1
        for w in range(wards):
            st[w, _BEDS] = beds_open[w, 0]
            st[w, _DAY_PEAK] = st[w, _LEVEL]
            st[w, _SHIFT_LEVEL] = st[w, _LEVEL]
            st[w, _INTERVAL] = -1
            following[w] = starts[w, 0]
        a = lo
        day = 0
        midnight = 24.0
        now = 0.0
        filling, filled = wards, 0  # the ward filling its opened beds at 00:00, and its level
        while True:
            freed = -1  # a ward where a bed frees, its occupant still counted
            take, to = -1, -1  # a new patient to put in a bed on ward ``to``
            if filling < wards:  # 00:00: one more bed opened on this ward, if any
                if st[filling, _LEVEL] >= st[filling, _BEDS]:
                    filling += 1
                    continue
                st[filling, _LEVEL] += 1
                filled = st[filling, _LEVEL]
                freed = filling
            else:
                t_out = heap[0] if size > 0 else np.inf
                t_in = hours[a] if a < hi else np.inf
                t = min(t_out, t_in)
                boundary = midnight
                for w in range(wards):
                    boundary = min(boundary, following[w])
                if boundary <= t and boundary < horizon:  # records first, then events at t
                    for w in range(wards):
                        if following[w] == boundary:  # a shift starts: close the last one
                            interval, shifts = st[w, _INTERVAL], nshifts[w]
                            if interval >= 0:
                                shift_peak[w, p, interval // shifts, interval % shifts] = st[
                                    w, _SHIFT_LEVEL
                                ]
                            interval += 1
                            st[w, _INTERVAL] = interval
                            st[w, _SHIFT_LEVEL] = st[w, _LEVEL]
                            following[w] = (24.0 * ((interval + 1) // shifts)
                                            + starts[w, (interval + 1) % shifts])  # fmt: skip
                    if midnight == boundary:  # 00:00: the day's records, then bed changes
                        for w in range(wards):
                            counts[w, _CENSUS, p, day] = st[w, _LEVEL]
                            counts[w, _PEAK, p, day] = st[w, _DAY_PEAK]
                            counts[w, _QUEUE, p, day] = st[w, _QTAIL] - st[w, _QHEAD]
                            counts[w, _OUTLIERS_ON_WARD, p, day] = st[w, _HOSTING]
                        day += 1
                        now = midnight
                        midnight += 24.0
                        for w in range(wards):
                            st[w, _DAY_PEAK] = st[w, _LEVEL]
                            st[w, _BEDS] = beds_open[w, day]
                        filling = 0
                    continue  # beds given at 00:00 may leave before the event at t
                if t >= horizon:
                    break
                now = t
                if t_out <= t_in:  # a discharge (before an arrival at the same time)
                    gone = who[0]
                    size = _pop_patient(heap, who, size)
                    v = loc[gone]
                    counts[v, _DISCHARGES, p, day] += 1
                    if listed[gone] >= 0:  # an outlier leaves its host ward
                        st[v, _HOSTING] -= 1
                        ended[homes[lo + gone - inpatients], listed[gone]] = now
                    loc[gone] = -1
                    freed = v
                else:
                    u = homes[a]
                    booked = some_planned and planned[a] == 1
                    if st[u, _LEVEL] < st[u, _BEDS]:
                        counts[u, _ADMISSIONS, p, day] += 1
                        st[u, _LEVEL] += 1
                        take, to = a, u
                    elif booked and cancel[u]:
                        counts[u, _CANCELLED, p, day] += 1
                        if st[u, _HOSTING] > 0:
                            counts[u, _CANCELLED_OUTLIERS, p, day] += 1
                    else:
                        counts[u, _ADMISSIONS, p, day] += 1
                        for j in range(0 if booked else nhosts[u]):
                            if st[hosts[u, j], _LEVEL] < st[hosts[u, j], _BEDS]:
                                to = hosts[u, j]
                                break
                        if to >= 0:
                            st[to, _LEVEL] += 1
                            take = a
                        elif wait[u] or booked:
                            counts[u, _WAITED, p, day] += 1
                            n = st[u, _QTAIL]
                            queue[u, n] = a
                            queue_day[u, n] = day
                            st[u, _QTAIL] = n + 1
                        else:
                            counts[u, _DIVERTED, p, day] += 1
                    a += 1
            while True:  # settle: beds to give, beds freed
                if take >= 0:  # new patient ``take`` gets a bed on ward ``to`` at ``now``
                    u = homes[take]
                    slot = inpatients + take - lo
                    counts[to, _BED_ADMISSIONS, p, day] += 1
                    booked = some_planned and planned[take] == 1
                    if booked:
                        counts[to, _PLANNED, p, day] += 1
                    leave = now + 24.0 * stays[take]
                    if tables is not None and calendar[u] and not booked:
                        leave = _calendar_leave(now, stays[take], clock[take], tables[u])
                    size = _push_patient(heap, who, size, leave, slot)
                    loc[slot] = to
                    listed[slot] = -1
                    if u != to:  # an outlier
                        counts[u, _PLACED, p, day] += 1
                        counts[to, _HOSTED, p, day] += 1
                        between[p, u, to] += 1
                        st[to, _HOSTING] += 1
                        n = st[u, _FTAIL]
                        fifo[u, n] = slot
                        placed_at[u, n] = now
                        placed_day[u, n] = day
                        ended[u, n] = horizon
                        listed[slot] = n
                        st[u, _FTAIL] = n + 1
                    _raise_peaks(st, to)
                    take = -1
                if freed < 0:
                    break
                v, freed = freed, -1
                if st[v, _LEVEL] > st[v, _BEDS]:  # beds were closed: this one closes
                    st[v, _LEVEL] -= 1
                    continue
                source = v if st[v, _QHEAD] < st[v, _QTAIL] else -1
                if source < 0:  # the longest-waiting emergency patient who may outlie here
                    when = np.inf
                    for j in range(nlinked[v]):
                        u = linked[v, j]
                        if st[u, _QHEAD] < st[u, _QTAIL]:
                            k = queue[u, st[u, _QHEAD]]
                            if not (some_planned and planned[k] == 1) and hours[k] < when:
                                source, when = u, hours[k]
                if source >= 0:  # the head of that queue takes the bed
                    head = st[source, _QHEAD]
                    take, to = queue[source, head], v
                    waits[source, head] = now - hours[take]
                    st[source, _QHEAD] = head + 1
                    continue
                mover = -1
                while move_back and st[v, _FHEAD] < st[v, _FTAIL]:
                    n = st[v, _FHEAD]
                    slot = fifo[v, n]
                    if loc[slot] >= 0 and listed[slot] == n and placed_at[v, n] > now - limit:
                        mover = slot
                        break
                    st[v, _FHEAD] = n + 1  # gone, moved or settled: skipped for good
                if mover < 0:
                    st[v, _LEVEL] -= 1  # the bed stays free
                    continue
                host = loc[mover]  # the outlier moves home; the host's bed frees in turn
                loc[mover] = v
                _raise_peaks(st, v)  # (a bed opened at 00:00 raised v's occupancy)
                st[host, _HOSTING] -= 1
                counts[v, _MOVED_BACK, p, day] += 1
                counts[host, _MOVED_OUT, p, day] += 1
                ended[v, listed[mover]] = now
                listed[mover] = -1
                freed = host
            if filling < wards and st[filling, _LEVEL] < filled:  # nobody for that bed
                filling += 1
        for w in range(wards):
            counts[w, _CENSUS, p, days - 1] = st[w, _LEVEL]
            counts[w, _PEAK, p, days - 1] = st[w, _DAY_PEAK]
            counts[w, _QUEUE, p, days - 1] = st[w, _QTAIL] - st[w, _QHEAD]
            counts[w, _OUTLIERS_ON_WARD, p, days - 1] = st[w, _HOSTING]
            interval, shifts = st[w, _INTERVAL], nshifts[w]
            if interval >= 0:
                shift_peak[w, p, interval // shifts, interval % shifts] = st[w, _SHIFT_LEVEL]
            for q in range(st[w, _QHEAD], st[w, _QTAIL]):  # still waiting at the end
                waits[w, q] = horizon - hours[queue[w, q]]
            for q in range(st[w, _QTAIL]):  # summed in order of arrival
                wait_hours[w, p, queue_day[w, q]] += waits[w, q]
            for n in range(st[w, _FTAIL]):  # summed in order of placing
                outlier_hours[w, p, placed_day[w, n]] += ended[w, n] - placed_at[w, n]


def _ward_tables(model):
    """The wards' calendar discharge tables as the compiled loop reads them: a tuple, one per
    ward (of one type, so the loop picks a ward's by its number; a ward with stays as
    durations gets another ward's, never read), or None when no ward has calendar discharges
    (the loop is then compiled without that branch)."""
    weekday = model.start.weekday()
    tables = [None if ward.discharges is None else tables_for(ward.discharges, weekday).arrays()
              for ward in model.wards]  # fmt: skip
    some = next((table for table in tables if table is not None), None)
    if some is None:
        return None
    return tuple(some if table is None else table for table in tables)


def _arguments(model, beds: np.ndarray):
    """The ward and link tuples of the compiled loop. Ward: beds open (wards, days), shift
    start hours (wards, most shifts) in increasing order, shifts per ward, True for policy
    "wait", True when a planned patient with no free bed is cancelled, True for calendar
    discharges. Links: outlying wards (wards, wards; -1 after each ward's list) and their
    numbers, the wards listing each ward (hospital order) and their numbers, move back, the
    move-back limit (hours)."""
    wards = len(model.wards)
    shifts = [sorted(shift.start_hour for shift in ward.settings.staffing.shifts)
              for ward in model.wards]  # fmt: skip
    starts = np.zeros((wards, max(len(s) for s in shifts)))
    for w, hours in enumerate(shifts):
        starts[w, : len(hours)] = hours
    ward = (
        beds.astype(np.int64),
        starts,
        np.array([len(s) for s in shifts], dtype=np.int64),
        np.array([m.settings.policy == "wait" for m in model.wards]),
        np.array([m.planned is not None and m.planned.when_full == "cancel" for m in model.wards]),
        np.array([m.discharges is not None for m in model.wards]),
    )
    outlying = model.outlying
    hosts = np.full((wards, wards), -1, dtype=np.int64)
    linked = np.full((wards, wards), -1, dtype=np.int64)
    nlinked = np.zeros(wards, dtype=np.int64)
    for u, listed in enumerate(outlying.hosts):
        hosts[u, : len(listed)] = listed
    for v in range(wards):
        takers = [u for u in range(wards) if v in outlying.hosts[u]]
        linked[v, : len(takers)] = takers
        nlinked[v] = len(takers)
    links = (hosts, np.array([len(h) for h in outlying.hosts], dtype=np.int64), linked, nlinked,
             bool(outlying.move_back), float(outlying.move_back_hours))  # fmt: skip
    return ward, links


def beds_by_ward(model, days: int) -> np.ndarray:
    """(wards, days) beds open on each ward each day."""
    return np.array([beds_open_by_day(w.settings, w.start, days) for w in model.wards])


#: The engine's record arrays, in the order the compiled loop takes them.
RECORDS = ("counts", "wait_hours", "outlier_hours", "shift_peaks", "between")


def record_specification(model, paths: int, days: int) -> dict[str, tuple[tuple, type]]:
    """Name -> (shape, dtype) of the records of ``paths`` paths, ward first, so that each
    ward's measure is one contiguous (paths, days) block that the result views without
    copying: counts (wards, ``COUNTED``, paths, days), wait hours and outlier hours (wards,
    paths, days), shift peaks (wards, paths, days, most shifts), outliers placed between wards
    (paths, wards, wards)."""
    wards = len(model.wards)
    shifts = max(len(ward.settings.staffing.shifts) for ward in model.wards)
    return {
        "counts": ((wards, len(COUNTED), paths, days), np.int32),
        "wait_hours": ((wards, paths, days), np.float64),
        "outlier_hours": ((wards, paths, days), np.float64),
        "shift_peaks": ((wards, paths, days, shifts), np.int32),
        "between": ((paths, wards, wards), np.int32),
    }


def record_arrays(model, paths: int, days: int) -> tuple[np.ndarray, ...]:
    """Zeroed records (:func:`record_specification`), in the order of :data:`RECORDS`."""
    specification = record_specification(model, paths, days)
    return tuple(np.zeros(*specification[name]) for name in RECORDS)


def rows(records: tuple[np.ndarray, ...], first: int, end: int) -> tuple[np.ndarray, ...]:
    """Views of the records of paths ``first`` to ``end`` (the paths axis of each)."""
    counts, wait_hours, outlier_hours, peaks, between = records
    part = slice(first, end)
    return (counts[:, :, part], wait_hours[:, part], outlier_hours[:, part], peaks[:, part],
            between[part])  # fmt: skip


def simulate_into(inputs: HospitalInputs, model, records) -> None:
    """Simulate the paths of ``inputs`` into ``records`` (views of as many paths, zeroed)."""
    days = records[0].shape[3]
    ward, links = _arguments(model, beds_by_ward(model, days))
    arrays = (inputs.offsets, inputs.arrival_hours, inputs.ward, inputs.stay_days,
              inputs.clock_uniforms, inputs.planned, inputs.remaining_days,
              inputs.inpatient_ward)  # fmt: skip
    _simulate_block(arrays, ward, links, records, _ward_tables(model))


def simulate_drawn(inputs: HospitalInputs, model, days: int) -> HospitalResult:
    """Simulate ``model`` over ``days`` days for the paths whose inputs are ``inputs``."""
    records = record_arrays(model, inputs.paths, days)
    simulate_into(inputs, model, records)
    return hospital_result(model, inputs.first_path, beds_by_ward(model, days), records)


def simulate_chunk(arrivals: list[np.ndarray], model, seed, first_path: int, records) -> None:
    """Draw and simulate the paths of the wards' daily ``arrivals`` (path ``first_path`` on)
    into ``records`` (views of as many paths), in blocks of about ``BLOCK_PATIENTS`` new
    patients, so the drawn inputs of a block are all that is held besides the records."""
    paths = arrivals[0].shape[0]
    per_path = max(int(sum(counts.sum(axis=1).max(initial=0) for counts in arrivals)), 1)
    block = max(BLOCK_PATIENTS // per_path, 1)
    for lo in range(0, paths, block):
        hi = min(lo + block, paths)
        inputs = draw_hospital(model, [c[lo:hi] for c in arrivals], seed, first_path + lo)
        simulate_into(inputs, model, rows(records, lo, hi))


def simulate_hospital_fast(
    arrivals: list[np.ndarray], model, seed, *, first_path: int = 0
) -> HospitalResult:
    """Simulate ``model`` for every path of the wards' daily ``arrivals`` (each (paths x days),
    hospital order), ward w's inputs from its own seed (:mod:`planner.hospital.sampling`)."""
    arrivals = [np.asarray(counts) for counts in arrivals]
    for counts in arrivals:
        check_arrivals(counts)
    paths, days = arrivals[0].shape
    records = record_arrays(model, paths, days)
    simulate_chunk(arrivals, model, seed, first_path, records)
    return hospital_result(model, first_path, beds_by_ward(model, days), records)

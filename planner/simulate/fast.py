"""The fast ward engine: the SimPy ward model's rules as a compiled loop, one path at a time.

``simulate_ward_fast`` takes the arguments of :func:`planner.simulate.ward.simulate_ward` and
returns the same ``WardResult``. Both engines read the same random inputs
(:mod:`planner.simulate.sampling`), so their results agree path by path, up to the order of
events at exactly equal times (probability 0 with continuous stays; at equal times this loop
takes discharges before arrivals).

Each path is an event loop over three sorted sources: the patients' arrivals, a heap of
discharge times of the patients in beds, and the record boundaries (00:00 of every day, when
bed changes take effect, and the start of every shift). Bed rules as in
:mod:`planner.simulate.ward`: a new patient gets a bed only while occupied beds < beds open;
when beds close, nobody is moved; policy "wait" queues a patient first come, first served and
the stay starts when a bed is taken, policy "divert" places the patient elsewhere.

The loop is compiled by numba (:mod:`planner.simulate.compiled`); its cost per patient does not
grow with the beds beyond the heap's logarithm.
"""

from __future__ import annotations

import numpy as np

from planner.simulate.compiled import compiled, compiled_inline
from planner.simulate.discharge_times import discharge_at, tables_for
from planner.simulate.model import WardModel, beds_open_by_day, check_arrivals
from planner.simulate.result import COUNTED, WardResult, ward_result
from planner.simulate.sampling import DrawnInputs, draw_inputs

#: Most new patients whose random inputs are held at once: a chunk of paths is drawn and
#: simulated in blocks of about this many patients (about 50 MB of inputs), so memory does not
#: grow with the chunk and the inputs stay close to the processor's cache.
BLOCK_PATIENTS = 1_000_000
_CENSUS, _PEAK, _ADMISSIONS, _BED_ADMISSIONS, _DISCHARGES, _WAITED, _DIVERTED, _QUEUE = range(8)
_PLANNED, _CANCELLED = 8, 9


@compiled
def _push(heap, size, value):  # pragma: no cover - compiled
    """Add ``value`` to the min-heap ``heap[:size]`` (4 children per entry: entry i's are
    4 i + 1 .. 4 i + 4); returns the new size."""
    i = size
    while i > 0:
        parent = (i - 1) >> 2
        if heap[parent] <= value:
            break
        heap[i] = heap[parent]
        i = parent
    heap[i] = value
    return size + 1


@compiled
def _pop(heap, size):  # pragma: no cover - compiled
    """Remove the smallest entry of the 4-ary min-heap ``heap[:size]``; returns the new size.
    Four children per entry make the heap half as deep as a binary one: fewer of the
    unpredictable comparisons that bound this loop."""
    size -= 1
    if size == 0:
        return 0
    last = heap[size]
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
        i = smallest
    heap[i] = last
    return size


@compiled_inline
def _calendar_leave(bed_hour, u, v, tables):  # pragma: no cover - compiled
    """The drawn discharge time of an emergency patient with calendar discharges, as bed hour
    plus the time to it (the sum the SimPy model's timeout makes). Copied into the loop only
    when the loop is compiled for calendar discharges (``tables`` not None)."""
    return bed_hour + (discharge_at(bed_hour, u, v, tables) - bed_hour)


@compiled
def _simulate_block(inputs, ward, records, tables):  # pragma: no cover - compiled
    """Simulate every path of a block. ``inputs``: (offsets, arrival hours, stay days,
    remaining days, clock uniforms, planned flags) as in ``DrawnInputs``; ``ward``: (beds open
    per day, shift start hours in increasing order, True for policy "wait", True when a
    planned patient with no free bed is cancelled); ``records``: (counts (paths, days, 10) in
    the order of ``COUNTED``, wait hours (paths, days), shift peaks (paths, days, shifts) in
    the order of the start hours), filled in; ``tables``: the calendar discharge tables, or
    None for stays as durations."""
    offsets, arrivals, stays, remaining, clock, planned = inputs
    beds_open, starts, wait, cancel = ward
    some_planned = planned.size > 0
    counts, wait_hours, shift_peak = records
    paths, days = wait_hours.shape
    shifts = starts.size
    horizon = 24.0 * days
    most = 0
    for p in range(paths):
        most = max(most, offsets[p + 1] - offsets[p])
    heap = np.empty(most + remaining.shape[1])
    queue = np.empty(max(most, 1), dtype=np.int64)  # waiting patients, first come first
    queue_day = np.empty(max(most, 1), dtype=np.int64)  # and the day each arrived
    queue_wait = np.empty(max(most, 1))  # and the hours each waited for a bed
    for p in range(paths):
        lo, hi = offsets[p], offsets[p + 1]
        size = 0
        for r in range(remaining.shape[1]):
            size = _push(heap, size, 24.0 * remaining[p, r])
        level = remaining.shape[1]
        beds = beds_open[0]
        head = tail = 0
        a = lo
        day = 0
        day_peak = level
        midnight = 24.0
        interval = -1  # shift interval: day x shifts + position; -1 before the first start
        shift_level = level
        following = starts[0]
        while True:
            t_out = heap[0] if size > 0 else np.inf
            t_in = arrivals[a] if a < hi else np.inf
            t = min(t_out, t_in)
            boundary = min(midnight, following)
            if boundary <= t and boundary < horizon:  # records first, then events at t
                if following == boundary:  # a shift starts: close the previous one
                    if interval >= 0:
                        shift_peak[p, interval // shifts, interval % shifts] = shift_level
                    interval += 1
                    shift_level = level
                    following = 24.0 * ((interval + 1) // shifts) + starts[(interval + 1) % shifts]
                if midnight == boundary:  # 00:00: the day's records, then bed changes
                    counts[p, day, _CENSUS] = level
                    counts[p, day, _PEAK] = day_peak
                    counts[p, day, _QUEUE] = tail - head
                    day += 1
                    midnight += 24.0
                    day_peak = level
                    beds = beds_open[day]
                    while head < tail and level < beds:  # a queue only while some wait
                        k = queue[head]
                        queue_wait[head] = boundary - arrivals[k]
                        head += 1
                        level += 1
                        counts[p, day, _BED_ADMISSIONS] += 1
                        if some_planned and planned[k] == 1:
                            counts[p, day, _PLANNED] += 1
                        leave = boundary + 24.0 * stays[k]
                        if tables is not None and not (some_planned and planned[k] == 1):
                            leave = _calendar_leave(boundary, stays[k], clock[k], tables)
                        size = _push(heap, size, leave)
                        day_peak = max(day_peak, level)
                        shift_level = max(shift_level, level)
                continue  # beds given at 00:00 may leave before the event at t
            if t >= horizon:
                break
            if t_out <= t_in:  # a discharge (before an arrival at the same time)
                size = _pop(heap, size)
                counts[p, day, _DISCHARGES] += 1
                if head < tail and level <= beds:  # the bed goes to the queue's head
                    k = queue[head]
                    queue_wait[head] = t - arrivals[k]
                    head += 1
                    counts[p, day, _BED_ADMISSIONS] += 1
                    if some_planned and planned[k] == 1:
                        counts[p, day, _PLANNED] += 1
                    leave = t + 24.0 * stays[k]
                    if tables is not None and not (some_planned and planned[k] == 1):
                        leave = _calendar_leave(t, stays[k], clock[k], tables)
                    size = _push(heap, size, leave)
                else:
                    level -= 1
            else:
                is_planned = some_planned and planned[a] == 1
                if level < beds:
                    counts[p, day, _ADMISSIONS] += 1
                    level += 1
                    counts[p, day, _BED_ADMISSIONS] += 1
                    if is_planned:
                        counts[p, day, _PLANNED] += 1
                    leave = t + 24.0 * stays[a]
                    if tables is not None and not is_planned:
                        leave = _calendar_leave(t, stays[a], clock[a], tables)
                    size = _push(heap, size, leave)
                    day_peak = max(day_peak, level)
                    shift_level = max(shift_level, level)
                elif is_planned and cancel:
                    counts[p, day, _CANCELLED] += 1
                elif wait or is_planned:
                    counts[p, day, _ADMISSIONS] += 1
                    counts[p, day, _WAITED] += 1
                    queue[tail] = a
                    queue_day[tail] = day
                    tail += 1
                else:
                    counts[p, day, _ADMISSIONS] += 1
                    counts[p, day, _DIVERTED] += 1
                a += 1
        counts[p, days - 1, _CENSUS] = level
        counts[p, days - 1, _PEAK] = day_peak
        counts[p, days - 1, _QUEUE] = tail - head
        if interval >= 0:
            shift_peak[p, interval // shifts, interval % shifts] = shift_level
        for q in range(head, tail):  # still waiting at the end of the window
            queue_wait[q] = horizon - arrivals[queue[q]]
        for q in range(tail):  # summed in order of arrival
            wait_hours[p, queue_day[q]] += queue_wait[q]


def _records(inputs: DrawnInputs, model: WardModel, beds: np.ndarray, out, at: int) -> None:
    """Simulate the paths of ``inputs`` into rows ``at``, ``at + 1``, ... of the record arrays
    ``out`` (counts, wait hours, shift peaks in the order of the shifts' start hours)."""
    ward = model.settings
    starts = np.sort([shift.start_hour for shift in ward.staffing.shifts])
    rows = slice(at, at + inputs.paths)
    arrays = (inputs.offsets, inputs.arrival_hours, inputs.stay_days, inputs.remaining_days,
              inputs.clock_uniforms, inputs.planned)  # fmt: skip
    cancel = model.planned is not None and model.planned.when_full == "cancel"
    _simulate_block(
        arrays,
        (beds, np.asarray(starts, dtype=float), ward.policy == "wait", cancel),
        tuple(array[rows] for array in out),
        _tables(model),
    )


def _tables(model: WardModel):
    """The discharge tables of calendar discharges, else None: the loop is then compiled
    without the calendar branch (numba drops a branch on an argument that is None), which
    keeps stays as durations as fast as before calendar discharges existed."""
    if model.discharges is None:
        return None
    return tables_for(model.discharges, model.start.weekday()).arrays()


def _result(model: WardModel, first_path: int, beds: np.ndarray, out) -> WardResult:
    counts, wait_hours, peaks = out
    shifts = model.settings.staffing.shifts
    order = np.argsort([shift.start_hour for shift in shifts], kind="stable")
    shift_peak = np.empty_like(peaks)
    shift_peak[:, :, order] = peaks
    daily = {name: counts[:, :, i] for i, name in enumerate(COUNTED)} | {"wait_hours": wait_hours}
    return ward_result(model.start, first_path, daily, beds, shift_peak, model.settings.staffing)


def _record_arrays(paths: int, days: int, shifts: int):
    return (
        np.zeros((paths, days, len(COUNTED)), dtype=np.int32),
        np.zeros((paths, days)),
        np.zeros((paths, days, shifts), dtype=np.int32),
    )


def simulate_drawn(inputs: DrawnInputs, model: WardModel, days: int) -> WardResult:
    """Simulate ``model`` over ``days`` days for the paths whose random inputs are
    ``inputs``."""
    beds = beds_open_by_day(model.settings, model.start, days).astype(np.int64)
    out = _record_arrays(inputs.paths, days, len(model.settings.staffing.shifts))
    _records(inputs, model, beds, out, 0)
    return _result(model, inputs.first_path, beds, out)


def simulate_ward_fast(
    arrivals: np.ndarray,
    model: WardModel,
    seed: int | np.random.SeedSequence,
    *,
    first_path: int = 0,
) -> WardResult:
    """Simulate ``model`` for every path of daily ``arrivals`` (paths x days, patients): the
    arguments and result of :func:`planner.simulate.ward.simulate_ward`. The paths are drawn
    and simulated in blocks of about ``BLOCK_PATIENTS`` new patients."""
    arrivals = np.asarray(arrivals)
    check_arrivals(arrivals)
    paths, days = arrivals.shape
    beds = beds_open_by_day(model.settings, model.start, days).astype(np.int64)
    out = _record_arrays(paths, days, len(model.settings.staffing.shifts))
    per_path = max(int(arrivals.sum(axis=1).max(initial=0)), 1)
    block = max(BLOCK_PATIENTS // per_path, 1)
    for lo in range(0, paths, block):
        inputs = draw_inputs(model, arrivals[lo : lo + block], seed, first_path + lo)
        _records(inputs, model, beds, out, lo)
    return _result(model, first_path, beds, out)

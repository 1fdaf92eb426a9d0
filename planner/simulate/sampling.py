"""Every random input of the ward simulation, drawn once per path and shared by the engines.

Path ``i`` (counted from 0 over the whole run) has its own child of the run's ward
``SeedSequence``: ``SeedSequence(entropy, spawn_key=(*spawn_key, i))``, the ``i``-th child that
``spawn`` would give, so a path's numbers depend only on the seed and its number, never on
chunks, processes or the engine. The child seeds one ``PCG64`` generator whose output is read
in two streams, each starting at a fixed position (``advance``), so that a plan with more or
fewer admissions changes only what it must (common random numbers across plans):

* position 0: one uniform per patient on the ward at the start (their number is the same in
  every plan), for the remaining stay given the time already spent; then two uniforms per
  emergency admission, in day order: the hour of the day (the hour-of-day profile inverted,
  as ``Generator.choice`` with probabilities does) and the time within the hour;
* position ``STREAM_SPACING``: the stays of new patients, the k-th in order of arrival time
  from the k-th draw, so patient k of a path keeps its stay when a plan changes beds or the
  rota;
* position ``2 * STREAM_SPACING``, only when discharges follow the calendar (the model's
  ``discharges``): the clock-time uniforms of the discharges, one per patient on the ward at
  the start, then one per new patient in order of arrival time;
* position ``3 * STREAM_SPACING``, only with a planned list (the model's ``planned``): the
  stays of the planned patients, in order of admission (their number and times are the same
  on every path).

With calendar discharges the first uniform of a patient (the one that gives a stay in the
continuous model) draws the day of stay of the discharge instead and the second its clock
time (:mod:`planner.simulate.discharge_times`): the patients on the ward get their discharge
times here, the new patients' are made by the engines when each takes a bed.

Uniforms are ``Generator.random`` doubles in [0, 1), written straight into the block's arrays;
stays and remaining stays invert the survival function at 1 - u, in (0, 1]. Stay distributions
that map one uniform to one stay (``StayDistribution.inverse_transform``) are transformed for
the whole block at once; the others (gamma) draw from a generator on the stays' stream, path
by path. Arrival times are made by a compiled loop (:mod:`planner.simulate.compiled`).

The block's arrays are flat: path ``i``'s patients are entries ``offsets[i]:offsets[i + 1]``.
Both engines read :class:`DrawnInputs` and draw nothing themselves.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import TYPE_CHECKING

import numpy as np

from planner.simulate.compiled import compiled
from planner.simulate.discharge_times import remaining_days, tables_for
from planner.simulate.lookup import UnitSearch

if TYPE_CHECKING:
    from planner.simulate.model import WardModel

#: Outputs of a path's generator between the starts of its streams (far more than any path
#: draws).
STREAM_SPACING = 2**48
#: Buckets of the table that gives the hour of the day for a uniform in one read.
HOUR_BUCKETS = 1024


@dataclass(frozen=True, eq=False)
class DrawnInputs:
    """The random inputs of a block of paths ``first_path, first_path + 1, ...``.

    ``offsets``: (paths + 1,) path ``i``'s new patients are entries ``offsets[i]`` to
    ``offsets[i + 1]`` of ``arrival_hours`` (hours since 00:00 of the first day, increasing
    within a path) and ``stay_days`` (their stays, days > 0, in the same order; with calendar
    discharges their uniforms for the day of stay instead); ``remaining_days``: (paths,
    inpatients) remaining stays of the patients on the ward at the start (days > 0), in the
    model's order; ``clock_uniforms``: with calendar discharges, the new patients' uniforms for
    the clock time of their discharges (else empty); ``planned``: with a planned list, 1 for
    each new patient who is a planned one (their stays are durations, whatever the timing),
    0 for an emergency one (else empty)."""

    first_path: int
    offsets: np.ndarray
    arrival_hours: np.ndarray
    stay_days: np.ndarray
    remaining_days: np.ndarray
    clock_uniforms: np.ndarray = field(default_factory=lambda: np.zeros(0))
    planned: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=np.uint8))

    @property
    def paths(self) -> int:
        return self.offsets.size - 1

    def path(self, i: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Arrival hours, stays (days) and remaining stays (days) of the block's path ``i``."""
        lo, hi = self.offsets[i], self.offsets[i + 1]
        return self.arrival_hours[lo:hi], self.stay_days[lo:hi], self.remaining_days[i]


def path_seed(seed: int | np.random.SeedSequence, path: int) -> np.random.SeedSequence:
    """The child ``SeedSequence`` of path number ``path``."""
    base = seed if isinstance(seed, np.random.SeedSequence) else np.random.SeedSequence(seed)
    return np.random.SeedSequence(base.entropy, spawn_key=(*base.spawn_key, path))


@compiled
def _merge(emergency, planned, merged):  # pragma: no cover - compiled
    """Merge each path's emergency patients (``emergency``: offsets, hours, stays, clock
    uniforms) with the planned ones (``planned``: hours, the same on every path, and stays
    (paths, n)) in order of time, planned first at equal times; ``merged``: (hours, stays, clock
    uniforms, planned flags) filled in, path i's from offsets[i] + i n."""
    offsets, hours, stays, clock = emergency
    planned_hours, planned_stays = planned
    out_hours, out_stays, out_clock, flags = merged
    n = planned_hours.size
    calendar = out_clock.size > 0
    for i in range(offsets.size - 1):
        k, hi, j = offsets[i], offsets[i + 1], 0
        m = offsets[i] + i * n
        while k < hi or j < n:
            if j < n and (k >= hi or planned_hours[j] <= hours[k]):
                out_hours[m], out_stays[m], flags[m] = planned_hours[j], planned_stays[i, j], 1
                j += 1
            else:
                out_hours[m], out_stays[m], flags[m] = hours[k], stays[k], 0
                if calendar:
                    out_clock[m] = clock[k]
                k += 1
            m += 1


def with_planned(
    inputs: DrawnInputs, hours: np.ndarray, stays: np.ndarray, calendar: bool
) -> DrawnInputs:
    """``inputs`` with the planned patients (admission ``hours``, the same on every path, and
    their ``stays`` (paths, n) in days) merged in, in order of time; ``calendar``: the
    emergency patients' discharges follow the calendar (their clock uniforms are merged too)."""
    paths, n = stays.shape
    total = inputs.arrival_hours.size + paths * n
    merged = (np.empty(total), np.empty(total), np.zeros(total if calendar else 0),
              np.empty(total, dtype=np.uint8))  # fmt: skip
    emergency = (inputs.offsets, inputs.arrival_hours, inputs.stay_days, inputs.clock_uniforms)
    _merge(emergency, (np.asarray(hours, dtype=float), np.ascontiguousarray(stays)), merged)
    return replace(
        inputs,
        offsets=inputs.offsets + n * np.arange(paths + 1),
        arrival_hours=merged[0],
        stay_days=merged[1],
        clock_uniforms=merged[2],
        planned=merged[3],
    )


@compiled
def _arrival_hours(pairs, skip, counts, cdf, table, last_moment, out):  # pragma: no cover
    """Arrival hours of a block, path after path, day after day: the t-th admission of day d
    at 24 d + (the number of ``cdf`` entries at or below u) + w, with u and w its pair of
    uniforms, kept below 24 (d + 1); each day's times sorted in place. ``pairs``: each path's
    ``skip`` uniforms for other uses, then its pairs. ``table``: the number of ``cdf``
    entries at or below every u of a bucket of width 1 / ``table.size``, or -1 where it
    changes inside the bucket."""
    k = 0
    for i in range(counts.shape[0]):
        first = (i + 1) * skip
        for d in range(counts.shape[1]):
            start = k
            for _ in range(counts[i, d]):
                u = pairs[first + 2 * k]
                w = pairs[first + 2 * k + 1]
                low = table[int(u * table.size)]
                if low < 0:  # searchsorted(cdf, u, "right")
                    low, high = 0, cdf.size
                    while low < high:
                        middle = (low + high) // 2
                        if cdf[middle] <= u:
                            low = middle + 1
                        else:
                            high = middle
                t = min(24.0 * d + low + w, last_moment[d])
                m = k
                while m > start and out[m - 1] > t:
                    out[m] = out[m - 1]
                    m -= 1
                out[m] = t
                k += 1


def cumulative_profile(profile: np.ndarray) -> np.ndarray:
    """The cumulative hour-of-day shares, the last exactly 1."""
    cdf = np.cumsum(profile / profile.sum())
    cdf /= cdf[-1]
    return cdf


def arrival_hours(
    pairs: np.ndarray, counts: np.ndarray, profile: np.ndarray, skip: int = 0
) -> np.ndarray:
    """Arrival hours of the paths of ``counts`` (paths x days) from their pairs of uniforms
    ``pairs`` (path after path, day after day, each path's pairs after ``skip`` uniforms for
    other uses), sorted within each path."""
    counts = np.ascontiguousarray(counts, dtype=np.int64)
    days = counts.shape[1]
    last_moment = np.nextafter((np.arange(days) + 1) * 24.0, 0)
    cdf = cumulative_profile(profile)
    # The hour for each bucket of uniforms, or -1 where it changes inside the bucket.
    table = UnitSearch(cdf, "right", bits=HOUR_BUCKETS.bit_length() - 1).table[:-1]
    out = np.empty(int(counts.sum()))
    _arrival_hours(pairs, skip, counts, cdf, table, last_moment, out)
    return out


def draw_inputs(
    model: WardModel, counts: np.ndarray, seed: int | np.random.SeedSequence, first_path: int = 0
) -> DrawnInputs:
    """Draw the random inputs of the paths of ``counts`` (paths x days emergency admissions),
    path ``first_path + i`` from its own stream (see the module docstring)."""
    counts = np.asarray(counts, dtype=np.int64)
    paths = counts.shape[0]
    offsets = np.zeros(paths + 1, dtype=np.int64)
    np.cumsum(counts.sum(axis=1), out=offsets[1:])
    inpatients = model.inpatients_elapsed.size
    stays = model.stays
    # Path i's first stream: its inpatients' uniforms, then its pairs, from here:
    starts = np.arange(paths + 1) * inpatients + 2 * offsets
    first_stream = np.empty(starts[-1])
    stay_u = np.empty(offsets[-1])
    base = seed if isinstance(seed, np.random.SeedSequence) else np.random.SeedSequence(seed)
    calendar = model.discharges is not None
    by_uniforms = calendar or stays.inverse_transform
    # Calendar discharges: path i's clock-time uniforms (inpatients', then new patients') are
    # entries starts[i] - offsets[i] to starts[i + 1] - offsets[i + 1] of ``clock``.
    clock = np.empty(starts[-1] - offsets[-1] if calendar else 0)
    planned = model.planned
    planned_hours, factor = (
        (np.zeros(0), np.ones(0))
        if planned is None
        else planned.schedule(model.start, counts.shape[1])
    )
    planned_u = np.empty((paths if planned else 0, planned_hours.size))
    bounds = zip(starts[:-1].tolist(), starts[1:].tolist(), offsets[:-1].tolist(),
                 offsets[1:].tolist(), strict=True)  # fmt: skip
    for i, (begin, end, lo, hi) in enumerate(bounds):
        bits = np.random.PCG64(path_seed(base, first_path + i))
        draw = np.random.Generator(bits)
        draw.random(out=first_stream[begin:end])
        bits.advance(STREAM_SPACING - (end - begin))
        if by_uniforms:
            draw.random(out=stay_u[lo:hi])
        else:
            stay_u[lo:hi] = stays.sample(draw, hi - lo)
        position = STREAM_SPACING + hi - lo
        if calendar:
            bits.advance(2 * STREAM_SPACING - position)
            draw.random(out=clock[begin - lo : end - hi])
            position = 2 * STREAM_SPACING + (end - hi) - (begin - lo)
        if planned is not None:
            bits.advance(3 * STREAM_SPACING - position)
            if planned.stays.inverse_transform:
                draw.random(out=planned_u[i])
            else:
                planned_u[i] = planned.stays.sample(draw, planned_hours.size)
    if planned is not None and planned.stays.inverse_transform:
        planned_u = planned.stays.from_uniforms(1.0 - planned_u.ravel()).reshape(planned_u.shape)
    planned_u *= factor
    inputs = _emergency_inputs(model, first_path, offsets, counts, (first_stream, stay_u, clock))
    if planned is None:
        return inputs
    return with_planned(inputs, planned_hours, planned_u, calendar)


def _emergency_inputs(model, first_path, offsets, counts, uniforms) -> DrawnInputs:
    """The drawn inputs of the emergency patients and those on the ward at the start, from
    the block's ``uniforms`` (first stream, stays stream, clock stream; module docstring)."""
    first_stream, stay_u, clock = uniforms
    paths = counts.shape[0]
    inpatients = model.inpatients_elapsed.size
    stays, calendar = model.stays, model.discharges is not None
    by_uniforms = calendar or stays.inverse_transform
    starts = np.arange(paths + 1) * inpatients + 2 * offsets
    remaining_u = first_stream[starts[:-1, None] + np.arange(inpatients)].ravel()
    elapsed = np.tile(model.inpatients_elapsed, paths)
    hours = arrival_hours(first_stream, counts, model.hour_profile, inpatients)
    if not calendar:
        return DrawnInputs(
            first_path=first_path,
            offsets=offsets,
            arrival_hours=hours,
            stay_days=stays.from_uniforms(1.0 - stay_u) if by_uniforms else stay_u,
            remaining_days=stays.remaining_from_uniforms(1.0 - remaining_u, elapsed).reshape(
                paths, inpatients
            ),
        )
    clock_start = (starts - offsets)[:-1, None]
    inpatient_clock = clock[clock_start + np.arange(inpatients)].ravel()
    new_clock = np.delete(clock, (clock_start + np.arange(inpatients)).ravel())
    tables = tables_for(model.discharges, model.start.weekday())
    remaining = remaining_days(tables, elapsed, remaining_u, inpatient_clock)
    return DrawnInputs(
        first_path=first_path,
        offsets=offsets,
        arrival_hours=hours,
        stay_days=stay_u,
        remaining_days=remaining.reshape(paths, inpatients),
        clock_uniforms=new_clock,
    )

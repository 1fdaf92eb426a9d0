"""Every random input of a hospital's paths: each ward's drawn as for a ward on its own.

Ward w of the hospital draws its inputs with :func:`planner.simulate.sampling.draw_inputs`
from its own seed, :func:`ward_seed` (the run's ``SeedSequence`` with ``w`` appended to its
spawn key), so path ``i`` of ward w has its own streams, the same whichever other wards the
hospital has, whatever the outlying rules, chunks, processes or engine. A ward with no
outlying links therefore gets exactly the result it would get simulated on its own with that
seed.

Per path, the wards' new patients are joined into one list in order of arrival time (at equal
times, the ward listed first in the hospital first, and each ward's own order kept), each
with its home ward. Both engines read :class:`HospitalInputs` and draw nothing themselves.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from planner.simulate.compiled import compiled
from planner.simulate.sampling import DrawnInputs, draw_inputs


def ward_seed(seed: int | np.random.SeedSequence, ward: int) -> np.random.SeedSequence:
    """The ``SeedSequence`` of the hospital's ward number ``ward`` (0 for the first)."""
    base = seed if isinstance(seed, np.random.SeedSequence) else np.random.SeedSequence(seed)
    return np.random.SeedSequence(base.entropy, spawn_key=(*base.spawn_key, ward))


@dataclass(frozen=True, eq=False)
class HospitalInputs:
    """The random inputs of a block of paths ``first_path, first_path + 1, ...``.

    New patients of path ``i`` are entries ``offsets[i]`` to ``offsets[i + 1]`` of
    ``arrival_hours`` (increasing within a path), ``ward`` (home ward, position in the
    hospital), ``stay_days``, ``clock_uniforms`` and ``planned`` (as in
    :class:`planner.simulate.sampling.DrawnInputs`; zeros where the home ward has no calendar
    discharges or no planned list, all empty when no ward has them). ``remaining_days``:
    (paths, inpatients) remaining stays of the patients on the wards at the start, ward after
    ward, each ward's in its model's order; ``inpatient_ward``: their wards."""

    first_path: int
    offsets: np.ndarray
    arrival_hours: np.ndarray
    ward: np.ndarray
    stay_days: np.ndarray
    clock_uniforms: np.ndarray
    planned: np.ndarray
    remaining_days: np.ndarray
    inpatient_ward: np.ndarray

    @property
    def paths(self) -> int:
        return self.offsets.size - 1


@compiled
def _join(offsets, ward_inputs, joined):  # pragma: no cover - compiled
    """Path by path, the wards' patients in order of time (ties: lower ward first).
    ``offsets``: (wards, paths + 1) the wards' path offsets into the concatenated
    ``ward_inputs`` (hours, stays, clock uniforms, planned flags; the last two may be empty);
    ``joined``: (hours, home wards, stays, clock uniforms, planned flags) filled in. The next
    patient is the least of the wards' next arrival times, kept side by side (a short scan)."""
    hours, stays, clock, planned = ward_inputs
    out_hours, out_ward, out_stays, out_clock, out_planned = joined
    wards, paths = offsets.shape[0], offsets.shape[1] - 1
    at = np.empty(wards, dtype=np.int64)
    following = np.empty(wards)  # each ward's next arrival time, inf when none is left
    m = 0
    for i in range(paths):
        for w in range(wards):
            at[w] = offsets[w, i]
            following[w] = hours[at[w]] if at[w] < offsets[w, i + 1] else np.inf
        end = m
        for w in range(wards):
            end += offsets[w, i + 1] - offsets[w, i]
        while m < end:
            w = 0
            for v in range(1, wards):
                if following[v] < following[w]:
                    w = v
            k = at[w]
            out_hours[m], out_ward[m], out_stays[m] = hours[k], w, stays[k]
            if clock.size > 0:
                out_clock[m] = clock[k]
            if planned.size > 0:
                out_planned[m] = planned[k]
            m += 1
            at[w] = k + 1
            following[w] = hours[k + 1] if k + 1 < offsets[w, i + 1] else np.inf


def join_wards(parts: list[DrawnInputs]) -> HospitalInputs:
    """The wards' inputs (hospital order, same paths) joined path by path."""
    paths = parts[0].paths
    sizes = [part.arrival_hours.size for part in parts]
    shift = np.concatenate([[0], np.cumsum(sizes)[:-1]])
    offsets = np.array([part.offsets + s for part, s in zip(parts, shift, strict=True)])

    def concatenated(name: str, dtype) -> np.ndarray:
        values = [getattr(part, name) for part in parts]
        if not any(value.size for value in values):
            return np.zeros(0, dtype=dtype)
        pairs = zip(values, sizes, strict=True)
        return np.concatenate([v if v.size else np.zeros(n, dtype=dtype) for v, n in pairs])

    ward_inputs = (np.concatenate([part.arrival_hours for part in parts]),
                   np.concatenate([part.stay_days for part in parts]),
                   concatenated("clock_uniforms", np.float64),
                   concatenated("planned", np.uint8))  # fmt: skip
    total = sum(sizes)
    clock, planned = ward_inputs[2].size, ward_inputs[3].size
    joined = (np.empty(total), np.empty(total, dtype=np.int64), np.empty(total),
              np.empty(clock), np.empty(planned, dtype=np.uint8))  # fmt: skip
    _join(offsets, ward_inputs, joined)
    return HospitalInputs(
        first_path=parts[0].first_path,
        offsets=np.sum([part.offsets for part in parts], axis=0),
        arrival_hours=joined[0],
        ward=joined[1],
        stay_days=joined[2],
        clock_uniforms=joined[3],
        planned=joined[4],
        remaining_days=np.hstack([part.remaining_days for part in parts]).reshape(paths, -1),
        inpatient_ward=np.repeat(
            np.arange(len(parts)), [part.remaining_days.shape[1] for part in parts]
        ),
    )


def draw_hospital(
    model, arrivals: list[np.ndarray], seed: int | np.random.SeedSequence, first_path: int = 0
) -> HospitalInputs:
    """Draw every ward's inputs (``arrivals``: each ward's (paths x days) emergency
    admissions, hospital order), ward w from :func:`ward_seed` ``(seed, w)``, and join them."""
    parts = [
        draw_inputs(ward, np.asarray(counts, dtype=np.int64), ward_seed(seed, w), first_path)
        for w, (ward, counts) in enumerate(zip(model.wards, arrivals, strict=True))
    ]
    return join_wards(parts)

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
def _join(offsets, hours, order):  # pragma: no cover - compiled
    """``order``: for each path, the positions in the wards' concatenated arrays of its
    patients in order of time (ties: lower ward first). ``offsets``: (wards, paths + 1) the
    wards' path offsets, already shifted to the concatenation."""
    wards, paths = offsets.shape[0], offsets.shape[1] - 1
    at = np.empty(wards, dtype=np.int64)
    m = 0
    for i in range(paths):
        for w in range(wards):
            at[w] = offsets[w, i]
        while True:
            best, when = -1, np.inf
            for w in range(wards):
                if at[w] < offsets[w, i + 1] and (best < 0 or hours[at[w]] < when):
                    best, when = w, hours[at[w]]
            if best < 0:
                break
            order[m] = at[best]
            at[best] += 1
            m += 1


def join_wards(parts: list[DrawnInputs]) -> HospitalInputs:
    """The wards' inputs (hospital order, same paths) joined path by path."""
    paths = parts[0].paths
    sizes = [part.arrival_hours.size for part in parts]
    shift = np.concatenate([[0], np.cumsum(sizes)[:-1]])
    offsets = np.array([part.offsets + s for part, s in zip(parts, shift, strict=True)])
    hours = np.concatenate([part.arrival_hours for part in parts])
    order = np.empty(hours.size, dtype=np.int64)
    _join(offsets, hours, order)

    def joined(name: str, dtype) -> np.ndarray:
        values = [getattr(part, name) for part in parts]
        if not any(value.size for value in values):
            return np.zeros(0, dtype=dtype)
        pairs = zip(values, sizes, strict=True)
        full = [v if v.size else np.zeros(n, dtype=dtype) for v, n in pairs]
        return np.concatenate(full).astype(dtype, copy=False)[order]

    ward = np.repeat(np.arange(len(parts)), sizes)[order]
    total = np.sum([part.offsets for part in parts], axis=0)
    return HospitalInputs(
        first_path=parts[0].first_path,
        offsets=total,
        arrival_hours=hours[order],
        ward=ward,
        stay_days=np.concatenate([part.stay_days for part in parts])[order],
        clock_uniforms=joined("clock_uniforms", np.float64),
        planned=joined("planned", np.uint8),
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

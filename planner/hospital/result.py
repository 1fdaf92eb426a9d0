"""The simulated hospital as arrays: each ward's result, and what moved between the wards.

:class:`HospitalResult` holds one :class:`planner.simulate.result.WardResult` per ward (census,
admissions, waits and so on, counted as :mod:`planner.hospital.model` says) and the outlying
measures, per ward, path and day (ward first: each ward's block is contiguous, as the engines
write it). Chunks of paths join along the paths axis (:meth:`HospitalResult.concat`).
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from planner.simulate.result import COUNTED as WARD_COUNTED
from planner.simulate.result import WardResult, ward_result

#: Per path, ward and day (int32, patients): ``outliers_placed`` (the ward's patients placed on
#: another ward, by the day placed), ``outliers_hosted`` (other wards' patients placed here),
#: ``moved_back`` (the ward's outliers who moved home), ``moved_out`` (outliers who left this
#: ward for home), ``cancelled_with_outliers`` (planned patients cancelled while the ward held
#: at least one outlier), ``outliers_on_ward`` (outliers in the ward's beds at 24:00).
OUTLYING = ("outliers_placed", "outliers_hosted", "moved_back", "moved_out",
            "cancelled_with_outliers", "outliers_on_ward")  # fmt: skip
#: Rows of the engines' integer daily records, in this order.
COUNTED = (*WARD_COUNTED, *OUTLYING)


@dataclass(frozen=True, eq=False)
class HospitalResult:
    """``names`` and ``wards`` (one ``WardResult`` each, hospital order); the measures of
    :data:`OUTLYING`, each (wards, paths, days) int32; ``outlier_hours`` (wards, paths, days)
    float64: hours the ward's patients spent outlying, by the day each was placed (to the end
    of the window for those still outlying); ``placed_between`` (paths, wards, wards) int32:
    outliers placed over the window by home ward (rows) and host ward (columns)."""

    names: tuple[str, ...]
    wards: tuple[WardResult, ...]
    outliers_placed: np.ndarray
    outliers_hosted: np.ndarray
    moved_back: np.ndarray
    moved_out: np.ndarray
    cancelled_with_outliers: np.ndarray
    outliers_on_ward: np.ndarray
    outlier_hours: np.ndarray
    placed_between: np.ndarray

    @property
    def paths(self) -> int:
        return self.placed_between.shape[0]

    def ward(self, name: str) -> WardResult:
        return self.wards[self.names.index(name)]

    @classmethod
    def concat(cls, parts: list[HospitalResult]) -> HospitalResult:
        """Consecutive chunks of paths of the same hospital joined into one result."""
        if len(parts) == 1:
            return parts[0]
        wards = tuple(
            WardResult.concat([part.wards[w] for part in parts]) for w in range(len(parts[0].wards))
        )
        arrays = {
            name: np.concatenate([getattr(part, name) for part in parts], axis=1)
            for name in (*OUTLYING, "outlier_hours")
        }
        between = np.concatenate([part.placed_between for part in parts])
        return replace(parts[0], wards=wards, placed_between=between, **arrays)


def fill_records(records, result: HospitalResult, model) -> None:
    """Write ``result`` (of ``model``) into ``records`` (the engines' arrays of as many paths,
    as :func:`hospital_result` reads them): for chunks simulated elsewhere (the SimPy model,
    a cluster)."""
    counts, wait_hours, outlier_hours, peaks, between = records
    for w, ward in enumerate(result.wards):
        for k, name in enumerate(WARD_COUNTED):
            counts[w, k] = getattr(ward, name)
        wait_hours[w] = ward.wait_hours
        shifts = model.wards[w].settings.staffing.shifts
        order = np.argsort([shift.start_hour for shift in shifts], kind="stable")
        peaks[w, :, :, : len(shifts)] = ward.shift_peak_occupancy[:, :, order]
    for i, name in enumerate(OUTLYING):
        counts[:, len(WARD_COUNTED) + i] = getattr(result, name)
    outlier_hours[...] = result.outlier_hours
    between[...] = result.placed_between


def hospital_result(model, first_path: int, beds: np.ndarray, records) -> HospitalResult:
    """A ``HospitalResult`` from the engines' records, ward first (as
    :func:`planner.hospital.fast._record_arrays` makes them): counts (wards, ``COUNTED``,
    paths, days), wait hours and outlier hours (wards, paths, days), shift peaks (wards, paths,
    days, most shifts; each ward's shifts in the order of their start hours) and outliers
    placed between wards (paths, wards, wards); ``beds``: (wards, days) beds open. The
    measures are views of the records, not copies."""
    counts, wait_hours, outlier_hours, peaks, between = records
    wards = []
    for w, ward in enumerate(model.wards):
        shifts = ward.settings.staffing.shifts
        order = np.argsort([shift.start_hour for shift in shifts], kind="stable")
        shift_peak = peaks[w, :, :, : len(shifts)]
        if not np.array_equal(order, np.arange(len(shifts))):
            shift_peak = np.empty_like(shift_peak)
            shift_peak[:, :, order] = peaks[w, :, :, : len(shifts)]
        daily = {name: counts[w, i] for i, name in enumerate(WARD_COUNTED)}
        daily["wait_hours"] = wait_hours[w]
        wards.append(ward_result(ward.start, first_path, daily, beds[w], shift_peak,
                                 ward.settings.staffing))  # fmt: skip
    outlying = {name: counts[:, len(WARD_COUNTED) + i] for i, name in enumerate(OUTLYING)}
    return HospitalResult(
        names=tuple(model.names),
        wards=tuple(wards),
        **outlying,
        outlier_hours=outlier_hours,
        placed_between=between,
    )

"""The simulated hospital as arrays: each ward's result, and what moved between the wards.

:class:`HospitalResult` holds one :class:`planner.simulate.result.WardResult` per ward (census,
admissions, waits and so on, counted as :mod:`planner.hospital.model` says) and the outlying
measures, per path, ward and day, with paths on the first axis so chunks of paths join by
concatenation (:meth:`HospitalResult.concat`).
"""

from __future__ import annotations

from dataclasses import dataclass, fields, replace

import numpy as np

from planner.simulate.fast import COUNTED as WARD_COUNTED
from planner.simulate.result import PATH_DAILY, WardResult, ward_result

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
    :data:`OUTLYING`, each (paths, wards, days) int32; ``outlier_hours`` (paths, wards, days)
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
        return self.outliers_placed.shape[0]

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
            field.name: np.concatenate([getattr(part, field.name) for part in parts])
            for field in fields(cls)
            if field.name not in ("names", "wards")
        }
        return replace(parts[0], wards=wards, **arrays)


def hospital_result(model, first_path: int, beds: np.ndarray, records) -> HospitalResult:
    """A ``HospitalResult`` from the engines' records: counts (paths, wards, days,
    ``COUNTED``), wait hours and outlier hours (paths, wards, days), shift peaks (paths, wards,
    days, most shifts; each ward's shifts in the order of their start hours) and outliers
    placed between wards (paths, wards, wards); ``beds``: (wards, days) beds open."""
    counts, wait_hours, outlier_hours, peaks, between = records
    wards = []
    for w, ward in enumerate(model.wards):
        shifts = ward.settings.staffing.shifts
        order = np.argsort([shift.start_hour for shift in shifts], kind="stable")
        shift_peak = np.empty(peaks.shape[:1] + peaks.shape[2:3] + (len(shifts),), np.int32)
        shift_peak[:, :, order] = peaks[:, w, :, : len(shifts)]
        daily = {name: counts[:, w, :, i] for i, name in enumerate(WARD_COUNTED)}
        daily["wait_hours"] = wait_hours[:, w]
        assert set(daily) == set(PATH_DAILY)
        wards.append(ward_result(ward.start, first_path, daily, beds[w], shift_peak,
                                 ward.settings.staffing))  # fmt: skip
    outlying = {
        name: np.ascontiguousarray(counts[:, :, :, len(WARD_COUNTED) + i])
        for i, name in enumerate(OUTLYING)
    }
    return HospitalResult(
        names=tuple(model.names),
        wards=tuple(wards),
        **outlying,
        outlier_hours=np.ascontiguousarray(outlier_hours),
        placed_between=np.ascontiguousarray(between),
    )

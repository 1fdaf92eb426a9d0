"""Hospital measures per week: the odds that a patient finds no bed on the home ward or any
ward it may outlie to, diversions out of the hospital, and what outlying moved where.

Weeks as in :mod:`planner.summaries.weekly` (7-day blocks from the first forecast day). Per
path and week:

* no bed anywhere: patients of any ward who found no bed on their home ward nor on a ward
  listed for their outlying, and waited (policy "wait") or were diverted (policy "divert");
  the week counts when at least one did;
* diverted: patients placed outside the hospital;
* outliers placed: patients placed on another ward (by home ward, the week placed), outlier
  bed-days (days they spent there, by the week placed, to the end of the window for those
  still outlying), outliers moved home, planned patients cancelled while their ward held
  another ward's outliers.

Probabilities are shares of paths; ``_se`` columns are Monte Carlo standard errors across the
independent paths (:mod:`planner.summaries.monte_carlo`).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from planner.hospital.result import HospitalResult
from planner.summaries.monte_carlo import mean_se, share_se


@dataclass(frozen=True)
class HospitalWeeks:
    """Per-path weekly measures: (paths, weeks) for the hospital, (paths, wards, weeks) by
    ward (home ward, except ``hosted``: the ward whose beds the outliers took)."""

    week_start: pd.DatetimeIndex
    names: tuple[str, ...]
    no_bed: np.ndarray
    diverted: np.ndarray
    placed: np.ndarray
    hosted: np.ndarray
    outlier_bed_days: np.ndarray
    moved_back: np.ndarray
    cancelled_with_outliers: np.ndarray


def _weeks(values: np.ndarray, skip: int) -> np.ndarray:
    """Sums over complete 7-day blocks of the last axis (days), from day ``skip``."""
    values = np.asarray(values, dtype=float)[..., skip:]
    weeks = values.shape[-1] // 7
    return values[..., : 7 * weeks].reshape(*values.shape[:-1], weeks, 7).sum(axis=-1)


def _by_path(values: np.ndarray, skip: int) -> np.ndarray:
    """Weekly sums of a (wards, paths, days) measure as (paths, wards, weeks)."""
    return np.moveaxis(_weeks(values, skip), 0, 1)


def hospital_weeks(result: HospitalResult, start) -> HospitalWeeks:
    """The weekly measures of ``result``, weeks counted from ``start`` (a later first day
    than the simulation's drops the days before it)."""
    first = pd.Timestamp(result.wards[0].start)
    skip = (pd.Timestamp(start) - first).days
    if skip < 0:
        raise ValueError(f"start {pd.Timestamp(start).date()} is before the first simulated day")
    no_bed = sum(_weeks(w.waited, skip) + _weeks(w.diverted, skip) for w in result.wards)
    diverted = sum(_weeks(w.diverted, skip) for w in result.wards)
    weeks = no_bed.shape[1]
    return HospitalWeeks(
        week_start=pd.date_range(pd.Timestamp(start), periods=weeks, freq="7D"),
        names=result.names,
        no_bed=no_bed,
        diverted=diverted,
        placed=_by_path(result.outliers_placed, skip),
        hosted=_by_path(result.outliers_hosted, skip),
        outlier_bed_days=_by_path(result.outlier_hours, skip) / 24.0,
        moved_back=_by_path(result.moved_back, skip),
        cancelled_with_outliers=_by_path(result.cancelled_with_outliers, skip),
    )


def hospital_table(weeks: HospitalWeeks) -> pd.DataFrame:
    """One row per week for the whole hospital (columns in docs/hospital.md)."""
    p_none, p_none_se = share_se(weeks.no_bed > 0)
    none, none_se = mean_se(weeks.no_bed)
    p_divert, p_divert_se = share_se(weeks.diverted > 0)
    placed, placed_se = mean_se(weeks.placed.sum(axis=1))
    cancelled = weeks.cancelled_with_outliers.sum(axis=1)
    p_cancel, p_cancel_se = share_se(cancelled > 0)
    return pd.DataFrame(
        {
            "week_start": weeks.week_start.strftime("%Y-%m-%d"),
            "p_no_bed_anywhere": p_none,
            "p_no_bed_anywhere_se": p_none_se,
            "expected_no_bed": none,
            "expected_no_bed_se": none_se,
            "p_diversion": p_divert,
            "p_diversion_se": p_divert_se,
            "expected_diverted": weeks.diverted.mean(axis=0),
            "expected_outliers_placed": placed,
            "expected_outliers_placed_se": placed_se,
            "expected_outlier_bed_days": weeks.outlier_bed_days.sum(axis=1).mean(axis=0),
            "expected_moved_back": weeks.moved_back.sum(axis=1).mean(axis=0),
            "expected_cancelled_with_outliers": cancelled.mean(axis=0),
            "p_cancelled_with_outliers": p_cancel,
            "p_cancelled_with_outliers_se": p_cancel_se,
        }
    )


def outlying_table(weeks: HospitalWeeks) -> pd.DataFrame:
    """One row per ward and week: the ward's patients placed elsewhere (chance of at least
    one, expected number, bed-days, moved home), other wards' patients placed on it, and its
    planned patients cancelled while it held outliers."""
    rows = []
    for w, name in enumerate(weeks.names):
        p_out, p_out_se = share_se(weeks.placed[:, w] > 0)
        placed, placed_se = mean_se(weeks.placed[:, w])
        rows.append(pd.DataFrame({
            "ward": name,
            "week_start": weeks.week_start.strftime("%Y-%m-%d"),
            "p_outlier": p_out,
            "p_outlier_se": p_out_se,
            "expected_outliers_placed": placed,
            "expected_outliers_placed_se": placed_se,
            "expected_outlier_bed_days": weeks.outlier_bed_days[:, w].mean(axis=0),
            "expected_moved_back": weeks.moved_back[:, w].mean(axis=0),
            "expected_outliers_hosted": weeks.hosted[:, w].mean(axis=0),
            "expected_cancelled_with_outliers": weeks.cancelled_with_outliers[:, w].mean(axis=0),
        }))  # fmt: skip
    return pd.concat(rows, ignore_index=True)


def placements(result: HospitalResult) -> pd.DataFrame:
    """Expected outliers placed over the window per path, by home ward (rows) and host ward
    (columns)."""
    mean = result.placed_between.mean(axis=0)
    return pd.DataFrame(mean, index=pd.Index(result.names, name="home"),
                        columns=pd.Index(result.names, name="host"))  # fmt: skip


def hospital_outlook(weeks: HospitalWeeks, first: int) -> dict[str, float]:
    """Over the first ``first`` weeks: the chance that some patient finds no bed anywhere,
    of a diversion out of the hospital (each with its SE), and the expected outliers."""
    first = min(first, weeks.no_bed.shape[1])
    none = (weeks.no_bed[:, :first].sum(axis=1) > 0)[:, None]
    divert = (weeks.diverted[:, :first].sum(axis=1) > 0)[:, None]
    p_none, p_none_se = share_se(none)
    p_divert, p_divert_se = share_se(divert)
    return {
        "weeks": first,
        "p_no_bed_anywhere": float(p_none[0]),
        "p_no_bed_anywhere_se": float(p_none_se[0]),
        "p_diversion": float(p_divert[0]),
        "p_diversion_se": float(p_divert_se[0]),
        "expected_outliers_placed": float(weeks.placed[:, :, :first].sum(axis=(1, 2)).mean()),
    }

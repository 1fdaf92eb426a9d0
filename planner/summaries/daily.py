"""Tables across paths: the distribution of the simulated ward on each day and shift.

Quantile columns are named ``<measure>_p<percent>`` (``census_p05`` is the 5% quantile of the
midnight census across paths), computed by linear interpolation between paths (numpy's
default), so they may fall between whole patients. ``p_`` columns are shares of paths (0-1);
``expected_`` columns are means across paths.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from planner.simulate.result import WardResult

QUANTILES = (0.05, 0.10, 0.25, 0.50, 0.75, 0.90, 0.95)


def quantile_names(measure: str, quantiles: tuple[float, ...] = QUANTILES) -> list[str]:
    """Column names ``<measure>_p05``, ``<measure>_p10``, ... for ``quantiles``."""
    return [f"{measure}_p{round(100 * q):02d}" for q in quantiles]


def _by_day(values: np.ndarray) -> np.ndarray:
    """Per-path values (paths, rows...) as a float (rows, paths) array, C order: the layout
    of a pivot with one column per path, so that means and quantiles across paths are
    computed in the same order as from the tidy tables."""
    return np.ascontiguousarray(values.reshape(values.shape[0], -1).T, dtype=float)


def _quantile_columns(values: np.ndarray, measure: str) -> dict[str, np.ndarray]:
    table = np.quantile(values, QUANTILES, axis=1)
    return dict(zip(quantile_names(measure), table, strict=True))


def summarise_daily(result: WardResult) -> pd.DataFrame:
    """One row per day: date, beds_open, census and peak_occupancy quantiles (patients),
    p_no_bed (share of paths in which some patient that day found no free bed: waited or
    diverted), expected_waited, expected_diverted (patients), expected_wait_hours (hours),
    expected_admissions and expected_discharges (patients arriving, and leaving beds)."""
    table = {"date": result.dates.astype("datetime64[s]")}
    table["beds_open"] = result.beds_open.astype(np.int32)
    table |= _quantile_columns(_by_day(result.census), "census")
    table |= _quantile_columns(_by_day(result.peak_occupancy), "peak_occupancy")
    table["p_no_bed"] = _by_day((result.waited + result.diverted) > 0).mean(axis=1)
    for column in ("waited", "diverted", "wait_hours", "admissions", "discharges"):
        table[f"expected_{column}"] = _by_day(getattr(result, column)).mean(axis=1)
    return pd.DataFrame(table)


def summarise_shifts(result: WardResult) -> pd.DataFrame:
    """One row per day and shift: date, shift, nurses_rostered, nurses_required quantiles,
    p_short (share of paths in which the shift is short of nurses) and expected_shortfall."""
    days, count = result.nurses_rostered.shape
    table = {
        "date": np.repeat(result.dates, count).astype("datetime64[s]"),
        "shift": np.tile(np.array(result.shift_names, dtype=object), days),
    }
    table["nurses_rostered"] = result.nurses_rostered.ravel().astype(np.int32)
    table |= _quantile_columns(_by_day(result.nurses_required), "nurses_required")
    table["p_short"] = _by_day(result.shortfall > 0).mean(axis=1)
    table["expected_shortfall"] = _by_day(result.shortfall).mean(axis=1)
    return pd.DataFrame(table)

"""Tables across paths: the distribution of the simulated ward on each day and shift.

Quantile columns are named ``<measure>_p<percent>`` (``census_p05`` is the 5% quantile of the
midnight census across paths), computed by linear interpolation between paths (numpy's
default), so they may fall between whole patients. ``p_`` columns are shares of paths (0-1);
``expected_`` columns are means across paths.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from planner.simulate.ward import WardResult

QUANTILES = (0.05, 0.10, 0.25, 0.50, 0.75, 0.90, 0.95)


def quantile_names(measure: str, quantiles: tuple[float, ...] = QUANTILES) -> list[str]:
    """Column names ``<measure>_p05``, ``<measure>_p10``, ... for ``quantiles``."""
    return [f"{measure}_p{round(100 * q):02d}" for q in quantiles]


def _by_path(frame: pd.DataFrame, keys: list[str], column: str) -> tuple[pd.DataFrame, np.ndarray]:
    """Values of ``column`` as an array (rows of ``keys``, paths) and the key rows."""
    wide = frame.pivot_table(index=keys, columns="path", values=column, observed=True)
    return wide.index.to_frame(index=False), wide.to_numpy(dtype=float)


def _quantile_columns(values: np.ndarray, measure: str) -> dict[str, np.ndarray]:
    table = np.quantile(values, QUANTILES, axis=1)
    return dict(zip(quantile_names(measure), table, strict=True))


def summarise_daily(result: WardResult) -> pd.DataFrame:
    """One row per day: date, beds_open, census and peak_occupancy quantiles (patients),
    p_no_bed (share of paths in which some patient that day found no free bed: waited or
    diverted), expected_waited, expected_diverted (patients), expected_wait_hours (hours)."""
    daily = result.daily.assign(no_bed=(result.daily["waited"] + result.daily["diverted"]) > 0)
    keys, census = _by_path(daily, ["date"], "census")
    table = {"date": keys["date"].to_numpy()}
    table["beds_open"] = _by_path(daily, ["date"], "beds_open")[1].max(axis=1).astype(np.int32)
    table |= _quantile_columns(census, "census")
    table |= _quantile_columns(_by_path(daily, ["date"], "peak_occupancy")[1], "peak_occupancy")
    table["p_no_bed"] = _by_path(daily, ["date"], "no_bed")[1].mean(axis=1)
    for column in ("waited", "diverted", "wait_hours"):
        table[f"expected_{column}"] = _by_path(daily, ["date"], column)[1].mean(axis=1)
    return pd.DataFrame(table)


def summarise_shifts(result: WardResult) -> pd.DataFrame:
    """One row per day and shift: date, shift, nurses_rostered, nurses_required quantiles,
    p_short (share of paths in which the shift is short of nurses) and expected_shortfall."""
    shifts = result.shifts.assign(short=result.shifts["shortfall"] > 0)
    keys = ["date", "shift"]
    rows, required = _by_path(shifts, keys, "nurses_required")
    table = {"date": rows["date"].to_numpy(), "shift": rows["shift"].to_numpy()}
    rostered = _by_path(shifts, keys, "nurses_rostered")[1]
    table["nurses_rostered"] = rostered.max(axis=1).astype(np.int32)
    table |= _quantile_columns(required, "nurses_required")
    table["p_short"] = _by_path(shifts, keys, "short")[1].mean(axis=1)
    table["expected_shortfall"] = _by_path(shifts, keys, "shortfall")[1].mean(axis=1)
    return pd.DataFrame(table)

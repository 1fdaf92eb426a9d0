"""Staffing and fullness by shift and weekday: which shift of which weekday runs short.

For each shift and weekday, over the forecast days with that weekday: the chance that one such
shift is short of registered nurses (nurses required > nurses rostered), the mean nurses
missing, the highest bed occupancy during the shift and the chance that every open bed is taken
at some moment of it. Each path's value is the share (or mean) over its days with that weekday;
the chance is the mean of those over the paths, and its standard error the spread of the
per-path values over sqrt(n) (the paths are independent; the days of one path are not, so the
path is the unit). The engines record the highest occupancy of each shift, not of each hour:
this is the finest time of day the results hold.
"""

from __future__ import annotations

from datetime import date

import numpy as np
import pandas as pd

from planner.simulate.result import WardResult
from planner.summaries.monte_carlo import mean_se
from planner.summaries.roster import WEEKDAYS


def _per_path(values: np.ndarray) -> np.ndarray:
    """The mean over days (axis 1) of each path, as a (paths, 1) array for :func:`mean_se`."""
    return values.astype(float).mean(axis=1)[:, None]


def shift_weekday_table(ward: WardResult, start: date | pd.Timestamp) -> pd.DataFrame:
    """shift_weekdays.csv: one row per shift and weekday (Monday first) over the days from
    ``start``: shift, weekday, days (such days in the horizon), nurses_rostered (the most common
    roster on them), p_short and p_short_se (chance that one such shift is short of nurses),
    expected_shortfall (mean nurses missing per such shift), peak_occupancy_p50 and _p90
    (quantiles over paths and days of the shift's highest occupied beds), beds_open (mean over
    those days), p_full and p_full_se (chance that every open bed is taken at some moment of
    the shift)."""
    skip = (pd.Timestamp(start) - pd.Timestamp(ward.start)).days
    dates = pd.DatetimeIndex(ward.dates[skip:])
    weekdays = np.asarray(dates.day_of_week)
    beds = ward.beds_open[skip:]
    rows = []
    for s, shift in enumerate(ward.shift_names):
        short = ward.shortfall[:, skip:, s]
        peak = ward.shift_peak_occupancy[:, skip:, s]
        rostered = ward.nurses_rostered[skip:, s]
        for day, name in enumerate(WEEKDAYS):
            days = np.flatnonzero(weekdays == day)
            if days.size == 0:
                continue
            p_short, p_short_se = mean_se(_per_path(short[:, days] > 0))
            p_full, p_full_se = mean_se(_per_path(peak[:, days] >= beds[days]))
            quantiles = np.quantile(peak[:, days], [0.5, 0.9])
            rows.append(
                {
                    "shift": shift,
                    "weekday": name,
                    "days": int(days.size),
                    "nurses_rostered": int(np.bincount(rostered[days]).argmax()),
                    "p_short": float(p_short[0]),
                    "p_short_se": float(p_short_se[0]),
                    "expected_shortfall": float(short[:, days].mean()),
                    "peak_occupancy_p50": float(quantiles[0]),
                    "peak_occupancy_p90": float(quantiles[1]),
                    "beds_open": float(beds[days].mean()),
                    "p_full": float(p_full[0]),
                    "p_full_se": float(p_full_se[0]),
                }
            )
    return pd.DataFrame(rows)

"""The nurse roster a ward needs: for each shift and weekday, the fewest registered nurses that
keep the chance of the shift being short at or under a target on every such day of the horizon.

A shift is short when the nurses it requires, max(minimum nurses, ceil(peak occupied beds /
patients per nurse)) (:mod:`planner.simulate.staffing`), exceed the nurses rostered. For one
day and shift, the chance of being short with r nurses is the share of paths requiring more
than r, which falls as r grows; the fewest r that keeps it at or under the target is an upper
quantile of the nurses required across paths. The roster for a weekday is the largest of these
over the horizon's days with that weekday, never below the minimum nurses. Nurses do not change
the bed simulation, so one simulated ward gives the whole roster.
"""

from __future__ import annotations

from datetime import date

import numpy as np
import pandas as pd

from planner.simulate.result import WardResult
from planner.summaries.monte_carlo import share_se

WEEKDAYS = ("Monday", "Tuesday", "Wednesday", "Thursday", "Friday", "Saturday", "Sunday")


def fewest_nurses(required: np.ndarray, target: float) -> np.ndarray:
    """Per day and shift, the fewest nurses r with share of paths (axis 0) requiring more
    than r at or under ``target``: with n paths and k = floor(target n), the (n - k)-th
    smallest requirement."""
    paths = required.shape[0]
    allowed = int(np.floor(target * paths + 1e-9))  # paths that may be short
    ordered = np.sort(required, axis=0)
    return ordered[paths - allowed - 1] if allowed < paths else np.zeros_like(ordered[0])


def roster_needed(
    ward: WardResult, start: date | pd.Timestamp, target: float, minimum_nurses: int
) -> pd.DataFrame:
    """roster.csv: one row per shift and weekday (Monday first) for the days from ``start``:
    shift, weekday, nurses_rostered (the most common roster on those days), nurses_needed,
    p_short_needed and its _se (the largest chance of a short shift on those days with the
    nurses needed), p_short_rostered and its _se (the same with the roster as it is)."""
    skip = (pd.Timestamp(start) - pd.Timestamp(ward.start)).days
    required = ward.nurses_required[:, skip:, :]
    rostered = ward.nurses_rostered[skip:, :]
    weekdays = np.array([d.weekday() for d in pd.DatetimeIndex(ward.dates[skip:])])
    needed = np.maximum(fewest_nurses(required, target), minimum_nurses)
    rows = []
    for s, shift in enumerate(ward.shift_names):
        for day, name in enumerate(WEEKDAYS):
            days = np.flatnonzero(weekdays == day)
            if days.size == 0:
                continue
            nurses = int(needed[days, s].max())
            row = {"shift": shift, "weekday": name,
                   "nurses_rostered": int(np.bincount(rostered[days, s]).argmax()),
                   "nurses_needed": nurses}  # fmt: skip
            for label, roster in (("needed", nurses), ("rostered", rostered[days, s])):
                share, se = share_se(required[:, days, s] > roster)
                worst = int(np.argmax(share))
                row[f"p_short_{label}"], row[f"p_short_{label}_se"] = share[worst], se[worst]
            rows.append(row)
    return pd.DataFrame(rows)

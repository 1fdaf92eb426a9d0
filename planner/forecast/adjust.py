"""Demand adjustments (``settings.demand``) applied to continuous admission paths.

Every forecast day is multiplied by ``1 + growth``; a surge multiplies the days from its
``start`` to its ``end`` (inclusive) by its ``factor``, on top of growth and of other surges that
overlap. Applied before clipping and rounding, so the counts follow the adjusted mean.
The limits (growth > -1, factor > 0) are those of the scenario's keys, checked when it is read.
"""

from __future__ import annotations

import numpy as np
import pandas as pd


def demand_multipliers(dates: pd.DatetimeIndex, demand) -> np.ndarray:
    """``(H,)`` multiplier of expected admissions on each forecast date."""
    multiplier = np.full(len(dates), 1.0 + demand.growth)
    days = pd.DatetimeIndex(dates).normalize()
    for surge in demand.surges:
        inside = (days >= pd.Timestamp(surge.start)) & (days <= pd.Timestamp(surge.end))
        multiplier[np.asarray(inside)] *= surge.factor
    return multiplier


def adjust_paths(paths: np.ndarray, dates: pd.DatetimeIndex, demand) -> np.ndarray:
    """Continuous paths ``(n_paths, H)`` times the day's demand multiplier."""
    return np.asarray(paths, dtype=float) * demand_multipliers(dates, demand)[None, :]

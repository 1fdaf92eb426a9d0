"""Demand adjustments (``settings.demand``) applied to continuous admission paths.

Every forecast day is multiplied by ``1 + growth``; a surge multiplies the days from its
``start`` to its ``end`` (inclusive) by its ``factor``, on top of growth and of other surges that
overlap. Applied before clipping and rounding, so the adjusted counts keep the adjusted mean.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from planner.errors import PlannerError


def demand_multipliers(dates: pd.DatetimeIndex, demand) -> np.ndarray:
    """``(H,)`` multiplier of expected admissions on each forecast date."""
    if demand.growth <= -1.0:
        raise PlannerError(f"demand.growth must be > -1, got {demand.growth}")
    multiplier = np.full(len(dates), 1.0 + demand.growth)
    days = pd.DatetimeIndex(dates).normalize()
    for surge in demand.surges:
        if surge.factor < 0:
            raise PlannerError(f"demand.surges: factor must be >= 0, got {surge.factor}")
        inside = (days >= pd.Timestamp(surge.start)) & (days <= pd.Timestamp(surge.end))
        multiplier[np.asarray(inside)] *= surge.factor
    return multiplier


def adjust_paths(paths: np.ndarray, dates: pd.DatetimeIndex, demand) -> np.ndarray:
    """Continuous paths ``(n_paths, H)`` times the day's demand multiplier."""
    return np.asarray(paths, dtype=float) * demand_multipliers(dates, demand)[None, :]

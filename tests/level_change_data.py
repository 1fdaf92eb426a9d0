"""Known processes for the level-change and drift tests: daily admissions around a weekday
pattern whose level steps up near the end of the history."""

from __future__ import annotations

import numpy as np
import pandas as pd

#: Expected admissions Monday..Sunday before the change (mean 19.57 a day); an invented
#: pattern with quieter weekends, of the size of a large acute medical intake.
WEEKDAY_MEANS = np.array([22.0, 21.0, 20.0, 20.0, 21.0, 17.0, 16.0])
#: Three years and a week, starting on a Monday.
DAYS = 3 * 364 + 7


def stepped_admissions(
    seed: int, step: float = 0.25, weeks_before_end: int = 8, noise: str = "poisson"
) -> tuple[pd.Series, pd.Timestamp]:
    """Daily admissions with expected level x (1 + ``step``) from ``weeks_before_end`` weeks
    before the end, and the first day at the new level. ``noise``: Poisson counts, or
    "constant" (the expected value plus normal noise of the pre-change Poisson variance, 19.6,
    on both sides of the change, rounded)."""
    rng = np.random.default_rng(seed)
    dates = pd.date_range("2023-01-02", periods=DAYS, freq="D")
    change = dates[-1] - pd.Timedelta(days=7 * weeks_before_end - 1)
    expected = WEEKDAY_MEANS[dates.day_of_week] * np.where(dates >= change, 1.0 + step, 1.0)
    if noise == "poisson":
        counts = rng.poisson(expected)
    else:
        counts = np.round(expected + rng.normal(0.0, np.sqrt(19.6), DAYS))
    return pd.Series(counts, index=dates, name="admissions"), change


def level_after(dates: pd.DatetimeIndex, step: float = 0.25) -> float:
    """Mean expected admissions on ``dates`` at the new level."""
    return float(np.mean(WEEKDAY_MEANS[pd.DatetimeIndex(dates).day_of_week] * (1.0 + step)))

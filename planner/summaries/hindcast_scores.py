"""Scores of a census hindcast: pure functions on arrays of census (patients at 24:00).

* Central intervals: 50% = [q0.25, q0.75], 80% = [q0.10, q0.90], 95% = [q0.025, q0.975] of the
  simulated paths (numpy's linear interpolation); a day is covered when lower <= census <=
  upper.
* Pinball loss (patients) averaged over the levels 0.05, 0.10, ..., 0.95:
  tau (y - q) if y >= q else (1 - tau)(q - y).
* Naive census baseline: the census at the origin carried forward; its distribution at
  horizon h days is the origin census plus the h-day census changes c[t + h] - c[t] over the
  history before the origin, each change counted once. Its quantiles are those of this
  distribution (numpy's linear interpolation); its chance of a census above a threshold is
  the share of the changes d with origin census + d > threshold (the empirical distribution
  itself, no interpolation). Horizons longer than the history use the longest it allows.
* Randomised PIT for integer census (Czado, Gneiting & Held, Biometrics 65 (2009) 1254-1261):
  u = F(y - 1) + v (F(y) - F(y - 1)), v ~ Uniform(0, 1), F the share of paths <= y; uniform
  on (0, 1) when the forecast is calibrated.
* Pearson chi-square test of equal PIT bin counts (scipy.stats.chisquare).
* Brier score (Brier, Monthly Weather Review 78 (1950) 1-3) of P(census > threshold): mean
  of (p - 1{y > threshold})^2, 0 for a perfect forecast; the model's and the naive baseline's
  on the same days, and a reliability table of predicted-probability bins. Brier skill
  1 - model / naive: a skill score against a reference forecast (Wilks, Statistical Methods
  in the Atmospheric Sciences, chapter on forecast verification; from memory); undefined
  (NaN) when the naive score is 0.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

PINBALL_LEVELS = tuple(np.round(np.arange(1, 20) * 0.05, 2))
#: Central interval (percent) -> (lower level, upper level).
INTERVALS = {50: (0.25, 0.75), 80: (0.10, 0.90), 95: (0.025, 0.975)}
BAND_LEVELS = tuple(sorted({level for pair in INTERVALS.values() for level in pair} | {0.5}))


def quantiles_of_paths(census_paths: np.ndarray, levels=BAND_LEVELS) -> np.ndarray:
    """Quantiles (days, levels) of simulated census (paths, days) across paths."""
    return np.quantile(np.asarray(census_paths, dtype=float), levels, axis=0).T


def census_changes(census_before: np.ndarray, h: int) -> np.ndarray:
    """The h-day census changes c[t + h] - c[t] over a census history (patients, oldest
    first); horizons longer than the history get the changes of the longest it allows, a
    history of one day a single change of 0."""
    c = np.asarray(census_before, dtype=float)
    step = min(h, max(c.size - 1, 1))
    return c[step:] - c[:-step] if c.size > step else np.zeros(1)


def census_changes_quantiles(census_before: np.ndarray, days: int, levels) -> np.ndarray:
    """Quantiles (days, levels) of h-day census changes, h = 1 .. ``days``, over a census
    history (patients, oldest first) (:func:`census_changes`)."""
    return np.array([np.quantile(census_changes(census_before, h), levels)
                     for h in range(1, days + 1)]).reshape(days, len(levels))  # fmt: skip


def naive_chance_above(census_before: np.ndarray, start: float, thresholds) -> np.ndarray:
    """The naive baseline's chance (days,) that the census on horizon day h = 1 .. is above
    ``thresholds[h - 1]``: the share of the h-day census changes d (:func:`census_changes`)
    with ``start`` + d > threshold."""
    limits = np.asarray(thresholds, dtype=float)
    return np.array([np.mean(start + census_changes(census_before, h) > limit)
                     for h, limit in enumerate(limits, start=1)])  # fmt: skip


def pinball_by_day(actual: np.ndarray, quantiles: np.ndarray, levels) -> np.ndarray:
    """Pinball loss (patients) of each day, averaged over ``levels``; quantiles (days, L)."""
    y = np.asarray(actual, dtype=float)[:, None]
    tau = np.asarray(levels, dtype=float)[None, :]
    gap = y - quantiles
    return np.mean(np.where(gap >= 0, tau * gap, (tau - 1.0) * gap), axis=1)


def covered(actual: np.ndarray, lower: np.ndarray, upper: np.ndarray) -> np.ndarray:
    """True on days with lower <= census <= upper."""
    y = np.asarray(actual, dtype=float)
    return (y >= lower) & (y <= upper)


def randomised_pit(census_paths: np.ndarray, actual: np.ndarray, rng: np.random.Generator):
    """Randomised PIT of integer census ``actual`` (days,) under the paths (paths, days)."""
    x = np.asarray(census_paths)
    y = np.asarray(actual)[None, :]
    below = np.mean(x < y, axis=0)  # F(y - 1) for integer census
    at_most = np.mean(x <= y, axis=0)  # F(y)
    return below + rng.random(below.shape) * (at_most - below)


def pit_chi_square(pit: np.ndarray, bins: int = 10) -> tuple[np.ndarray, float, float]:
    """Counts of PIT values in ``bins`` equal bins of [0, 1], the Pearson chi-square statistic
    against equal counts and its p-value (bins - 1 degrees of freedom)."""
    counts = np.histogram(np.clip(pit, 0, 1), bins=bins, range=(0.0, 1.0))[0]
    if counts.sum() == 0:
        return counts, float("nan"), float("nan")
    from scipy import stats  # here: scipy.stats takes about half a second to import

    test = stats.chisquare(counts)
    return counts, float(test.statistic), float(test.pvalue)


def brier_score(probability: np.ndarray, outcome: np.ndarray) -> float:
    """Mean squared difference between P(event) and the 0/1 outcome."""
    p, y = np.asarray(probability, dtype=float), np.asarray(outcome, dtype=float)
    return float(np.mean((p - y) ** 2)) if p.size else float("nan")


def reliability_table(probability, outcome, bins: int = 10) -> pd.DataFrame:
    """Predicted-probability bins [0, 0.1), ..., [0.9, 1.0]: ``days``, ``mean_predicted``,
    ``observed_frequency`` (share of days with the event); empty bins are left out."""
    p, y = np.asarray(probability, dtype=float), np.asarray(outcome, dtype=float)
    which = np.minimum((p * bins).astype(int), bins - 1)
    rows = []
    for b in range(bins):
        inside = which == b
        if inside.any():
            rows.append(
                (b / bins, (b + 1) / bins, int(inside.sum()), p[inside].mean(), y[inside].mean())
            )
    columns = ["bin_from", "bin_to", "days", "mean_predicted", "observed_frequency"]
    return pd.DataFrame(rows, columns=columns)


def brier_skill(model: float, naive: float) -> float:
    """1 - model / naive Brier score (module docstring); NaN when the naive score is 0."""
    return 1.0 - model / naive if naive > 0 else float("nan")


def summary_by_week(table: pd.DataFrame, threshold_columns: dict[str, int]) -> pd.DataFrame:
    """Per horizon week (0 = all weeks together) from hindcast rows: days, origins, coverage
    of the model's and the naive baseline's 50/80/95% intervals, mean pinball loss of each,
    pinball skill (1 - model / naive), and for each threshold column ``p_<name>`` (with the
    naive baseline's ``naive_p_<name>``) the Brier score of each, ``model_brier_<name>`` and
    ``naive_brier_<name>``, and ``brier_skill_<name>`` (1 - model / naive)."""
    rows = []
    weeks = [0, *sorted(table["horizon_week"].unique())]
    for week in weeks:
        part = table if week == 0 else table[table["horizon_week"] == week]
        y = part["census"].to_numpy()
        row = {"horizon_week": week, "days": len(part), "origins": part["origin"].nunique()}
        for who in ("model", "naive"):
            for percent in INTERVALS:
                lower, upper = part[f"{who}_lo{percent}"], part[f"{who}_hi{percent}"]
                row[f"{who}_coverage_{percent}"] = float(np.mean(covered(y, lower, upper)))
            row[f"{who}_pinball"] = float(part[f"{who}_pinball"].mean())
        row["pinball_skill"] = 1.0 - row["model_pinball"] / row["naive_pinball"]
        for column, offset in threshold_columns.items():
            outcome = y > part["beds_open"].to_numpy() - offset
            name = column.removeprefix("p_")
            model = brier_score(part[column], outcome)
            naive = brier_score(part[f"naive_{column}"], outcome)
            row[f"model_brier_{name}"], row[f"naive_brier_{name}"] = model, naive
            row[f"brier_skill_{name}"] = brier_skill(model, naive)
        rows.append(row)
    return pd.DataFrame(rows)

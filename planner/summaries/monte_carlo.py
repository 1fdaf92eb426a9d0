"""Shares and means over independent paths, with their Monte Carlo standard errors.

sqrt(p (1 - p) / n) for a share and sd / sqrt(n) for a mean, across the n independent paths
(Source: Morris, White & Crowther, Stat. Med. 38 (2019), Table 6); a paired difference between
two plans run on the same paths has the standard error of the path-by-path differences.
"""

from __future__ import annotations

import numpy as np


def share_se(indicator: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Share of paths (axis 0) and its Monte Carlo standard error sqrt(p (1 - p) / n)."""
    share = indicator.mean(axis=0)
    return share, np.sqrt(share * (1 - share) / indicator.shape[0])


def mean_se(values: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Mean over paths (axis 0) and its standard error sd / sqrt(n)."""
    n = values.shape[0]
    spread = values.std(axis=0, ddof=1) if n > 1 else np.zeros(values.shape[1])
    return values.mean(axis=0), spread / np.sqrt(n)


def ratio_se(events: np.ndarray, totals: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Pooled share sum(events) / sum(totals) over paths (axis 0), e.g. patients who found no
    free bed among all patients admitted, and its standard error across the independent paths
    (the ratio of two means, linearised): sqrt(sum_i (y_i - R x_i)^2 / (n (n - 1))) / mean(x).

    Events inside one path are clustered (one busy spell turns away many patients), so the
    paths, not the patients, are the independent units; a binomial error over all patients
    would understate it. Where no path has any total, the share is 0 with error 0."""
    y = np.asarray(events, dtype=float)
    x = np.asarray(totals, dtype=float)
    n = y.shape[0]
    pooled = x.sum(axis=0)
    share = np.divide(y.sum(axis=0), pooled, out=np.zeros(pooled.shape), where=pooled > 0)
    spread = ((y - share * x) ** 2).sum(axis=0) / max(n * (n - 1), 1)
    mean_total = pooled / n
    se = np.divide(np.sqrt(spread), mean_total, out=np.zeros(pooled.shape), where=pooled > 0)
    return share, se


def paired_difference(a: np.ndarray, b: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Mean over paths of b - a (arrays paths x weeks) and its paired standard error."""
    return mean_se(b.astype(float) - a.astype(float))

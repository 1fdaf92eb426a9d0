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


def paired_difference(a: np.ndarray, b: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Mean over paths of b - a (arrays paths x weeks) and its paired standard error."""
    return mean_se(b.astype(float) - a.astype(float))

"""Forecast accuracy measures; pure functions on arrays of admissions per day.

- MAE, RMSE: mean absolute / root mean squared error of a point forecast.
- MASE (Hyndman & Koehler 2006): mean |error| divided by the in-sample mean absolute error of
  the seasonal naive forecast on the training data, ``(1/(n-m)) sum_{t>m} |y_t - y_{t-m}|``,
  ``m = 7`` for daily data. Below 1 = better than last week's same weekday, in sample.
- Pinball loss of quantile ``q`` at level ``tau``: ``tau (y - q)`` if ``y >= q`` else
  ``(1 - tau)(q - y)``, averaged over days and levels.
- Coverage: share of days with ``lower <= y <= upper``.
- Interval score of a central ``(1 - alpha)`` interval (Gneiting & Raftery 2007, eq. 43):
  ``(u - l) + (2/alpha)(l - y) 1{y < l} + (2/alpha)(y - u) 1{y > u}``, averaged over days.
"""

from __future__ import annotations

import numpy as np


def mae(actual, forecast) -> float:
    """Mean absolute error (admissions per day)."""
    return float(np.mean(np.abs(np.asarray(actual, float) - np.asarray(forecast, float))))


def rmse(actual, forecast) -> float:
    """Root mean squared error (admissions per day)."""
    return float(np.sqrt(np.mean((np.asarray(actual, float) - np.asarray(forecast, float)) ** 2)))


def mase_scale(training, m: int = 7) -> float:
    """In-sample mean absolute seasonal-naive error of the training data (period ``m``)."""
    training = np.asarray(training, dtype=float)
    return float(np.mean(np.abs(training[m:] - training[:-m])))


def pinball_loss(actual, quantiles, levels) -> float:
    """Mean pinball loss; ``quantiles`` has shape ``(days, len(levels))``."""
    actual = np.asarray(actual, dtype=float)[:, None]
    quantiles = np.asarray(quantiles, dtype=float)
    tau = np.asarray(levels, dtype=float)[None, :]
    difference = actual - quantiles
    return float(np.mean(np.where(difference >= 0, tau * difference, (tau - 1.0) * difference)))


def coverage(actual, lower, upper) -> float:
    """Share of days inside ``[lower, upper]`` (bounds included)."""
    actual = np.asarray(actual, dtype=float)
    return float(np.mean((actual >= np.asarray(lower)) & (actual <= np.asarray(upper))))


def interval_score(actual, lower, upper, alpha: float) -> float:
    """Mean interval score of the central ``(1 - alpha)`` interval (admissions per day)."""
    actual = np.asarray(actual, dtype=float)
    lower = np.asarray(lower, dtype=float)
    upper = np.asarray(upper, dtype=float)
    score = (
        (upper - lower)
        + (2.0 / alpha) * np.maximum(lower - actual, 0.0)
        + (2.0 / alpha) * np.maximum(actual - upper, 0.0)
    )
    return float(np.mean(score))

"""A drift alarm: has demand moved away from the model in the last weeks of the history?

A tabular CUSUM in both directions (Page 1954; Montgomery, Introduction to Statistical
Quality Control, ch. 9) on the standardised one-step errors ``z_t`` of the last
:data:`WINDOW_DAYS` days: ``S+_t = max(0, S+_{t-1} + z_t - k)`` and
``S-_t = max(0, S-_{t-1} - z_t - k)``, both starting at 0, with ``k`` = :data:`ALLOWANCE` and
an alarm when one passes ``h`` = :data:`THRESHOLD`. The errors are the backtest's
out-of-sample one-step errors when a backtest was run, else the model's in-sample residuals;
both are divided by the standard deviation of the model's in-sample residuals. With
independent N(0, 1) errors the two-sided scheme signals falsely about once in 465 days (its
in-control average run length, ``tests/test_forecast_drift.py``), so over the 91-day window
about one history in six (17%) that has not changed gives an alarm: a prompt to look, not a
finding. A shift of one standard deviation is signalled after about 10 days on average.

The alarm is the first day either sum passes ``h``; the run of errors behind it started the
day after that sum was last 0. Days before the latest declared level change inside the
history are left out (the change explains them). The alarm warns only: it never changes the
forecast.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

#: Reference value k (in standard deviations of the errors).
ALLOWANCE = 0.5
#: Decision interval h (in standard deviations of the errors).
THRESHOLD = 5.0
#: Days at the end of the history the CUSUM runs over (13 weeks).
WINDOW_DAYS = 91


@dataclass(frozen=True)
class DriftAlarm:
    """A CUSUM signal: admissions ran ``direction`` ("above" or "below") the model from
    ``started`` until the sum passed the threshold on ``signalled``; ``errors`` names the errors
    watched ("backtest" or "in-sample")."""

    direction: str
    started: pd.Timestamp
    signalled: pd.Timestamp
    errors: str

    def message(self) -> str:
        """One line for the terminal and the report."""
        return (
            f"Drift alarm: admissions have run {self.direction} the model since "
            f"{self.started.date()} (CUSUM of {self.errors} one-step errors, signal on "
            f"{self.signalled.date()}); if demand has changed, declare a level change under "
            f"[[forecast.level_change]]"
        )


def cusum(z, allowance: float = ALLOWANCE) -> tuple[np.ndarray, np.ndarray]:
    """``(S+, S-)`` of the standardised errors ``z`` along the last axis (any leading axes are
    separate series), each starting from 0."""
    z = np.asarray(z, dtype=float)
    upper, lower = np.empty_like(z), np.empty_like(z)
    high = low = np.zeros(z.shape[:-1])
    for t in range(z.shape[-1]):
        high = np.maximum(0.0, high + z[..., t] - allowance)
        low = np.maximum(0.0, low - z[..., t] - allowance)
        upper[..., t], lower[..., t] = high, low
    return upper, lower


def _signal(sums: np.ndarray, threshold: float) -> tuple[int, int] | None:
    """(first day past ``threshold``, first day of the run behind it), or None."""
    past = np.flatnonzero(sums > threshold)
    if past.shape[0] == 0:
        return None
    signal = int(past[0])
    zeros = np.flatnonzero(sums[:signal] == 0.0)
    return signal, int(zeros[-1]) + 1 if zeros.shape[0] else 0


def drift_alarm(errors, last_day, scale: float, since=None, source: str = "in-sample"):
    """The alarm on one-step ``errors`` (admissions) of consecutive days ending on
    ``last_day``, divided by ``scale`` (the in-sample residuals' standard deviation), over the
    last :data:`WINDOW_DAYS` days from ``since`` on (if later); None when neither sum passes
    :data:`THRESHOLD` (or there is nothing to watch)."""
    errors = np.asarray(errors, dtype=float)
    last_day = pd.Timestamp(last_day)
    days = pd.date_range(end=last_day, periods=errors.shape[0], freq="D")
    first = last_day - pd.Timedelta(days=WINDOW_DAYS - 1)
    if since is not None:
        first = max(first, pd.Timestamp(since))
    keep = np.asarray(days >= first)
    if not keep.any() or not np.isfinite(scale) or scale <= 0:
        return None
    days = days[keep]
    upper, lower = cusum(errors[keep] / scale)
    found = [
        (found[0], found[1], direction)
        for sums, direction in ((upper, "above"), (lower, "below"))
        if (found := _signal(sums, THRESHOLD)) is not None
    ]
    if not found:
        return None
    signal, start, direction = min(found)
    return DriftAlarm(direction, days[start], days[signal], source)


def watched_drift(fit, backtest, dates: pd.DatetimeIndex, level_changes=()) -> DriftAlarm | None:
    """The alarm of a forecast, on :data:`WINDOW_DAYS` days from the latest of the
    ``level_changes`` (step dates inside the history) on: the backtest's one-step errors
    (``backtest.residuals["recursive"]``, consecutive days to the end of the history) when there
    is a backtest and no declared change in the last 2 x :data:`WINDOW_DAYS` days, else the
    one-step ``fit``'s residuals. (Backtest origins soon after a declared change estimate its
    step from a few days; the days each origin forecasts share that estimate's error, which
    the CUSUM would read as drift.) None without a fitted model (seasonal naive)."""
    if fit is None:
        return None
    scale = float(np.std(fit.residuals))
    last_day = pd.Timestamp(dates[-1])
    since = max(level_changes) if len(level_changes) else None
    recent = since is not None and since > last_day - pd.Timedelta(days=2 * WINDOW_DAYS)
    if backtest is not None and not recent:
        return drift_alarm(backtest.residuals["recursive"], last_day, scale, since, "backtest")
    return drift_alarm(fit.residuals, last_day, scale, since, "in-sample")

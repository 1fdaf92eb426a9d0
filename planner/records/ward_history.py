"""The ward as its records know it at a moment.

A :class:`WardHistory` holds what the ward's files say (daily admissions, episodes) and the
first reported day. From it come, for the moment the simulation starts (00:00 of the day after
the history, or an earlier hindcast origin):

* the daily admissions known by then;
* the stays known by then: stays ended by then are observed, stays still running are censored
  at that moment (:func:`stays_at`);
* the patients on the ward then, with their elapsed stays (:func:`inpatients_at`);
* the recorded census, day by day (:mod:`planner.records.census`).

Run, compare and hindcast all read the ward through this one class; a hindcast cuts it at a
past origin with :meth:`WardHistory.known_at`.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np
import pandas as pd

from planner.records.census import census_series

HOURS_PER_DAY = 24.0
#: Recorded stays shorter than this (same-minute admission and discharge) are counted as
#: this long, so every stay is positive: one minute, in days.
MINIMUM_RECORDED_STAY_DAYS = 1.0 / (24 * 60)


def inpatients_at(episodes: pd.DataFrame, moment: pd.Timestamp) -> np.ndarray:
    """Elapsed stays (days) at ``moment`` of the patients on the ward then: admitted before it
    and not yet discharged (discharge after it, or none recorded)."""
    moment = pd.Timestamp(moment)
    admitted = episodes["admitted_at"]
    discharged = episodes["discharged_at"]
    present = (admitted < moment) & (discharged.isna() | (discharged > moment))
    elapsed = (moment - admitted[present]).dt.total_seconds() / 3600.0 / HOURS_PER_DAY
    return np.sort(elapsed.to_numpy(dtype=float))


def stays_at(episodes: pd.DataFrame, moment: pd.Timestamp) -> tuple[np.ndarray, np.ndarray]:
    """Stays (days) as they were known at ``moment``, and which of them had ended.

    Episodes discharged by ``moment`` are ended (observed, stay = discharge - admission);
    episodes admitted before ``moment`` and not discharged by then are censored at
    ``moment`` (stay so far = moment - admission); episodes admitted at or after ``moment``
    are left out. Returns ``(durations_days, observed)``.
    """
    moment = pd.Timestamp(moment)
    admitted = episodes["admitted_at"]
    discharged = episodes["discharged_at"]
    known = (admitted < moment).to_numpy()
    ended = (discharged <= moment).to_numpy() & known  # NaT compares False
    end = discharged.where(ended, moment)[known]
    hours = (end - admitted[known]).dt.total_seconds().to_numpy() / 3600.0
    return hours / HOURS_PER_DAY, ended[known]


@dataclass(frozen=True)
class WardHistory:
    """What the ward's files say: daily admissions (gap-free), episodes (or None) and the
    first reported day."""

    admissions: pd.Series
    episodes: pd.DataFrame | None
    start: pd.Timestamp

    @property
    def last_day(self) -> pd.Timestamp:
        return self.admissions.index[-1]

    @property
    def first_day(self) -> pd.Timestamp:
        """The day after the history: the ward is simulated from here, as the records leave
        it, even when the report starts later (``start``)."""
        return self.last_day + pd.Timedelta(days=1)

    @property
    def gap_days(self) -> int:
        """Days simulated before ``start``, not reported."""
        return (self.start - self.first_day).days

    def inpatients_elapsed(self) -> np.ndarray:
        """Elapsed stays (days) of the patients on the ward at 00:00 of the first day."""
        if self.episodes is None:
            return np.zeros(0)
        return inpatients_at(self.episodes, self.first_day)

    def stays(self) -> tuple[np.ndarray | None, np.ndarray | None]:
        """Stays (days) as known at the first day and whether each has ended: stays still in
        progress are censored then. Recorded stays shorter than a minute count as one minute.
        (None, None) without episodes."""
        if self.episodes is None:
            return None, None
        durations, observed = stays_at(self.episodes, self.first_day)
        return np.maximum(durations, MINIMUM_RECORDED_STAY_DAYS), observed

    def of_method(self, method: str) -> WardHistory:
        """The same history with only the episodes whose admission method (column
        ``method``) is ``method`` ("planned" or "emergency"): for the stays of one stream.
        The history itself when the episodes carry no method."""
        if self.episodes is None or "method" not in self.episodes:
            return self
        return replace(self, episodes=self.episodes[self.episodes["method"] == method])

    def census(self) -> pd.Series | None:
        """The recorded midnight census (patients) of every day of the history, or None
        without episodes."""
        if self.episodes is None:
            return None
        return census_series(self.episodes, last_day=self.last_day)

    def known_at(self, origin: pd.Timestamp) -> WardHistory:
        """What the files said at 00:00 of ``origin``: admissions and episodes before it,
        discharges after it not yet known; the simulation then starts at ``origin``."""
        origin = pd.Timestamp(origin)
        episodes = None
        if self.episodes is not None:
            episodes = self.episodes[self.episodes["admitted_at"] < origin].copy()
            late = episodes["discharged_at"] > origin
            episodes.loc[late, "discharged_at"] = pd.NaT
        admissions = self.admissions[self.admissions.index < origin]
        return WardHistory(admissions, episodes, origin)

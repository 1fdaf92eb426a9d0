"""Length of stay with stays still in progress: right-censoring and the Kaplan-Meier estimate.

At any moment, patients still on the ward have stays that are known only to exceed the time
spent so far (right-censored). Keeping only completed stays drops the long ones that are still
running and underestimates the mean stay; the product-limit (Kaplan-Meier) estimate uses them.

Kaplan-Meier: at the distinct event times t_1 < ... < t_k (days), with d_j stays ending at t_j
and n_j stays still running just before t_j (ended or censored at or after t_j),
S(t) = prod_{t_j <= t} (1 - d_j / n_j). A stay censored at t_j counts as at risk at t_j.

``KaplanMeierStays`` samples stays by inverse transform on this step function. Beyond the
largest recorded stay t_max (ended or censored) the estimate says nothing; the remaining
mass S(t_max) is given an exponential tail starting at t_max,
S(t) = S(t_max) exp(-(t - t_max) / theta), where theta is the censored maximum-likelihood
mean excess over the 90% point u of the estimate: theta = (sum over stays > u of (x - u)) /
(number of ended stays > u), or the estimate's mean up to t_max if no ended stay exceeds u.
With no censoring S(t_max) = 0 and this is plain resampling of the recorded stays.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import ClassVar

import numpy as np

from planner.errors import PlannerError
from planner.simulate.lookup import UnitSearch
from planner.simulate.stays import (
    MINIMUM_STAY_DAYS,
    StayDistribution,
    _elapsed_days,
    positive_number,
)

#: The tail's mean excess is estimated over the stays beyond this point of the estimate.
TAIL_FROM_QUANTILE = 0.9


def checked_stays(durations, observed) -> tuple[np.ndarray, np.ndarray]:
    x = np.asarray(durations, dtype=float).ravel()
    e = np.asarray(observed).ravel()
    if x.size == 0:
        raise PlannerError("stays: no episode stays given")
    if e.shape != x.shape or e.dtype != bool:
        raise PlannerError("observed: need one True/False per stay (True = the stay ended)")
    if not np.all(np.isfinite(x)) or np.any(x <= 0):
        raise PlannerError("stays: every length of stay must be a finite number of days > 0")
    if not e.any():
        raise PlannerError("observed: no stay has ended; cannot estimate the length of stay")
    return x, e


@dataclass(frozen=True)
class KaplanMeier:
    """Product-limit estimate: ``times`` (distinct ended-stay lengths, days), ``survival``
    (S just after each time), ``at_risk`` (n_j) and ``events`` (d_j); ``largest`` is the
    longest recorded stay (days, ended or censored)."""

    times: np.ndarray
    survival: np.ndarray
    at_risk: np.ndarray
    events: np.ndarray
    largest: float

    def __call__(self, t) -> np.ndarray:
        """S(t) for t in days, on [0, largest] (a right-continuous step function)."""
        index = np.searchsorted(self.times, np.asarray(t, dtype=float), "right")
        return np.concatenate(([1.0], self.survival))[index]


def kaplan_meier(durations, observed) -> KaplanMeier:
    """The Kaplan-Meier estimate of P(stay > t) from stays (days) and ended flags."""
    x, e = checked_stays(durations, observed)
    order = np.argsort(x, kind="stable")
    x, e = x[order], e[order]
    times, first = np.unique(x, return_index=True)
    at_risk = x.size - first
    events = np.add.reduceat(e.astype(np.int64), first)
    keep = events > 0
    times, at_risk, events = times[keep], at_risk[keep], events[keep]
    survival = np.cumprod(1.0 - events / at_risk)
    return KaplanMeier(times, survival, at_risk, events, float(x[-1]))


def _tail_mean(estimate: KaplanMeier, x: np.ndarray, e: np.ndarray) -> float:
    """Censored MLE of the mean excess over the estimate's 90% point (see module docstring)."""
    below = np.flatnonzero(estimate.survival <= 1 - TAIL_FROM_QUANTILE)
    threshold = estimate.times[below[0]] if below.size else estimate.times[-1]
    beyond = x > threshold
    ended = int(np.count_nonzero(beyond & e))
    if ended == 0:
        return _restricted_mean(estimate)
    return float(np.sum(x[beyond] - threshold) / ended)


def _restricted_mean(estimate: KaplanMeier) -> float:
    """Integral of S from 0 to ``largest`` (days)."""
    edges = np.concatenate(([0.0], estimate.times, [estimate.largest]))
    levels = np.concatenate(([1.0], estimate.survival))
    return float(np.sum(levels * np.diff(edges)))


@dataclass(frozen=True, eq=False)
class KaplanMeierStays(StayDistribution):
    """Stays (days) drawn from the Kaplan-Meier estimate of ended and censored stays, with the
    exponential tail of the module docstring beyond the longest recorded stay."""

    durations: np.ndarray
    observed: np.ndarray
    estimate: KaplanMeier = field(init=False)
    tail_mean_days: float = field(init=False)
    #: Count of survival values below a target (the estimate's S, increasing), by table.
    _below: UnitSearch = field(init=False, repr=False, compare=False)
    name: ClassVar[str] = "Kaplan-Meier"

    def __post_init__(self) -> None:
        x, e = checked_stays(self.durations, self.observed)
        estimate = kaplan_meier(x, e)
        object.__setattr__(self, "estimate", estimate)
        object.__setattr__(self, "tail_mean_days", _tail_mean(estimate, x, e))
        # 2**18 buckets (a 1 MB table): thousands of steps leave 1-2% of uniforms to search.
        below = UnitSearch(estimate.survival[::-1], "left", bits=18)
        object.__setattr__(self, "_below", below)

    @property
    def _masses(self) -> np.ndarray:
        return -np.diff(np.concatenate(([1.0], self.estimate.survival)))

    @property
    def _tail_mass(self) -> float:
        return float(max(self.estimate.survival[-1], 0.0))

    @property
    def mean(self) -> float:
        tail = self._tail_mass * (self.estimate.largest + self.tail_mean_days)
        return float(np.sum(self._masses * self.estimate.times) + tail)

    @property
    def sd(self) -> float:
        start, theta = self.estimate.largest, self.tail_mean_days
        second = np.sum(self._masses * self.estimate.times**2)
        second += self._tail_mass * (start**2 + 2 * start * theta + 2 * theta**2)
        return float(np.sqrt(max(second - self.mean**2, 0.0)))

    def survival(self, t: np.ndarray) -> np.ndarray:
        t = np.asarray(t, dtype=float)
        beyond = np.maximum(t - self.estimate.largest, 0.0) / self.tail_mean_days
        return np.where(
            t > self.estimate.largest,
            self._tail_mass * np.exp(-beyond),
            self.estimate(np.minimum(t, self.estimate.largest)),
        )

    def _inverse(self, target: np.ndarray, after: np.ndarray | float) -> np.ndarray:
        """The stay t > ``after`` with S(t) first below ``target`` (inverse transform; targets
        in (0, 1])."""
        km = self.estimate
        steps = km.times.size
        index = steps - self._below(target)  # the first j with S_j < target
        stay = km.times[np.minimum(index, steps - 1)]
        beyond = np.flatnonzero(index >= steps)  # S never falls below target: the tail
        if beyond.size:
            with np.errstate(divide="ignore"):
                tail = km.largest + self.tail_mean_days * np.log(self._tail_mass / target[beyond])
            # The tail is only reached for after > largest (memoryless there).
            stay[beyond] = np.maximum(tail, np.broadcast_to(after, target.shape)[beyond])
        return stay

    def from_uniforms(self, u: np.ndarray) -> np.ndarray:
        u = np.asarray(u, dtype=float)
        return np.maximum(self._inverse(u, 0.0), MINIMUM_STAY_DAYS)

    def remaining_from_uniforms(self, u: np.ndarray, elapsed: np.ndarray) -> np.ndarray:
        u, e = np.broadcast_arrays(np.asarray(u, dtype=float), _elapsed_days(elapsed))
        left = self.survival(e)
        # Past the longest recorded stay the tail is exponential, so the remaining stay is too;
        # so it is where the estimate leaves no stay beyond the time spent (S(e) = 0: the
        # longest recorded stay ended, nothing censored after it). Only the others are looked
        # up in the steps (their targets u S(e) are above 0).
        steps = (e <= self.estimate.largest) & (left > 0)
        remaining = -self.tail_mean_days * np.log(u)
        remaining[steps] = self._inverse(u[steps] * left[steps], e[steps]) - e[steps]
        return np.maximum(remaining, MINIMUM_STAY_DAYS)

    def rescaled(self, factor: float) -> KaplanMeierStays:
        return KaplanMeierStays(self.durations * positive_number(factor, "factor"), self.observed)

    def describe(self) -> str:
        n, censored = self.observed.size, int(np.count_nonzero(~self.observed))
        return (
            f"Kaplan-Meier ({n} episodes, {censored} still in), mean {self.mean:.1f} d, "
            f"sd {self.sd:.1f} d"
        )

"""Length of stay: distributions of a patient's stay on the ward, in days.

A ``StayDistribution`` is immutable. It draws stays (``sample``), gives the chance a stay lasts
longer than t days (``survival``), draws the remaining stay of patients already on the ward
(``sample_remaining``) and rescales every stay by a factor (``rescaled``). Fitting them to
episodes and reading the scenario's ``[stay]`` settings is in :mod:`planner.simulate.stay_fit`.

Stays are floats > 0: a draw that would round to 0 is raised to ``MINIMUM_STAY_DAYS``.
"""

from __future__ import annotations

import math
from abc import ABC, abstractmethod
from dataclasses import dataclass, field
from typing import ClassVar

import numpy as np
from scipy import optimize, special, stats

from planner.errors import PlannerError
from planner.schema import choices

#: Shortest stay returned, in days (about 0.1 ms); keeps every stay strictly positive.
MINIMUM_STAY_DAYS = 1e-9

#: Conditional survival targets below this are treated as underflow (see ``Gamma``).
_UNDERFLOW = 1e-300

PARAMETRIC_MODELS = ("lognormal", "gamma", "weibull", "exponential")
#: Families compared when ``model="best"``.
BEST_CANDIDATES = ("lognormal", "gamma", "weibull")
#: The models a scenario can name: "empirical", "best" and the parametric families.
MODELS = choices("stay.model")


def positive_number(value: float, name: str) -> float:
    if not (isinstance(value, int | float | np.floating | np.integer) and math.isfinite(value)):
        raise PlannerError(f"{name} must be a finite number, got {value!r}")
    if value <= 0:
        raise PlannerError(f"{name} must be > 0, got {value!r}")
    return float(value)


def _uniform_open_closed(rng: np.random.Generator, size: int | tuple) -> np.ndarray:
    """Uniforms on (0, 1], so that log(u) is finite."""
    return 1.0 - rng.random(size)


def _elapsed_days(elapsed: np.ndarray) -> np.ndarray:
    e = np.asarray(elapsed, dtype=float)
    if not np.all(np.isfinite(e)) or np.any(e < 0):
        raise ValueError("elapsed must be finite days >= 0")
    return e


class StayDistribution(ABC):
    """Distribution of length of stay S in days (S > 0)."""

    name: ClassVar[str]

    @property
    @abstractmethod
    def mean(self) -> float:
        """Mean stay, days."""

    @property
    @abstractmethod
    def sd(self) -> float:
        """Standard deviation of the stay, days."""

    @abstractmethod
    def sample(self, rng: np.random.Generator, size: int) -> np.ndarray:
        """``size`` independent stays, days (float array, all > 0)."""

    @abstractmethod
    def survival(self, t: np.ndarray) -> np.ndarray:
        """P(S > t) for stays t in days (array of the same shape)."""

    @abstractmethod
    def sample_remaining(self, rng: np.random.Generator, elapsed: np.ndarray) -> np.ndarray:
        """Remaining stay r (days, > 0) of patients already in for ``elapsed`` days, one per
        patient, drawn from P(S > e + r | S > e). Uses exactly one uniform per patient."""

    @abstractmethod
    def rescaled(self, factor: float) -> StayDistribution:
        """The distribution of ``factor`` x S: every stay multiplied, same shape (CV)."""

    def describe(self) -> str:
        """One line for reports, e.g. ``"lognormal, mean 5.1 d, sd 4.8 d"``."""
        return f"{self.name}, mean {self.mean:.1f} d, sd {self.sd:.1f} d"


class ParametricStay(StayDistribution):
    """A family backed by a frozen ``scipy.stats`` distribution (location fixed at 0)."""

    @property
    @abstractmethod
    def scipy(self) -> stats.rv_continuous:
        """The frozen scipy.stats distribution."""

    @property
    def mean(self) -> float:
        return float(self.scipy.mean())

    @property
    def sd(self) -> float:
        return float(self.scipy.std())

    def survival(self, t: np.ndarray) -> np.ndarray:
        return np.asarray(self.scipy.sf(np.asarray(t, dtype=float)), dtype=float)

    def sample_remaining(self, rng: np.random.Generator, elapsed: np.ndarray) -> np.ndarray:
        e = _elapsed_days(elapsed)
        u = _uniform_open_closed(rng, e.shape)
        return np.maximum(self._remaining(u, e), MINIMUM_STAY_DAYS)

    @abstractmethod
    def _remaining(self, u: np.ndarray, e: np.ndarray) -> np.ndarray:
        """r with P(S > e + r | S > e) = u (inverse transform on the conditional survival)."""


@dataclass(frozen=True)
class Lognormal(ParametricStay):
    """log S ~ Normal(``mu``, ``sigma``); S in days."""

    mu: float
    sigma: float
    name: ClassVar[str] = "lognormal"

    def __post_init__(self) -> None:
        if not math.isfinite(self.mu):
            raise PlannerError(f"mu must be a finite number, got {self.mu!r}")
        positive_number(self.sigma, "sigma")

    @classmethod
    def from_mean_sd(cls, mean: float, sd: float) -> Lognormal:
        """The lognormal with this mean and sd (days): sigma^2 = log(1 + (sd/mean)^2),
        mu = log(mean) - sigma^2 / 2."""
        mean, sd = positive_number(mean, "mean"), positive_number(sd, "sd")
        sigma2 = math.log1p((sd / mean) ** 2)
        return cls(math.log(mean) - sigma2 / 2, math.sqrt(sigma2))

    @property
    def scipy(self) -> stats.rv_continuous:
        return stats.lognorm(self.sigma, scale=math.exp(self.mu))

    def sample(self, rng: np.random.Generator, size: int) -> np.ndarray:
        return np.maximum(rng.lognormal(self.mu, self.sigma, size), MINIMUM_STAY_DAYS)

    def _remaining(self, u: np.ndarray, e: np.ndarray) -> np.ndarray:
        # In log space throughout: log P(S > t) = log_ndtr(-z(t)), inverted by ndtri_exp, so
        # the far tail (P(S > e) below 1e-308) does not underflow.
        with np.errstate(divide="ignore"):
            z_e = (np.log(e) - self.mu) / self.sigma
        log_target = np.log(u) + special.log_ndtr(-z_e)
        z_t = -special.ndtri_exp(log_target)
        return np.exp(self.mu + self.sigma * z_t) - e

    def rescaled(self, factor: float) -> Lognormal:
        return Lognormal(self.mu + math.log(positive_number(factor, "factor")), self.sigma)


@dataclass(frozen=True)
class Gamma(ParametricStay):
    """Gamma with ``shape`` k and ``scale`` theta (days): mean k theta, variance k theta^2."""

    shape: float
    scale: float
    name: ClassVar[str] = "gamma"

    def __post_init__(self) -> None:
        positive_number(self.shape, "shape")
        positive_number(self.scale, "scale")

    @classmethod
    def from_mean_sd(cls, mean: float, sd: float) -> Gamma:
        """The gamma with this mean and sd (days): k = (mean/sd)^2, theta = sd^2/mean."""
        mean, sd = positive_number(mean, "mean"), positive_number(sd, "sd")
        return cls((mean / sd) ** 2, sd**2 / mean)

    @property
    def scipy(self) -> stats.rv_continuous:
        return stats.gamma(self.shape, scale=self.scale)

    def sample(self, rng: np.random.Generator, size: int) -> np.ndarray:
        return np.maximum(rng.gamma(self.shape, self.scale, size), MINIMUM_STAY_DAYS)

    def _remaining(self, u: np.ndarray, e: np.ndarray) -> np.ndarray:
        # r = isf(u sf(e)) - e. When u sf(e) underflows (below 1e-300, e deep in the tail) the
        # stay is drawn from the limit of the gamma's residual life, exponential with mean
        # theta (the hazard tends to 1/theta), using the same uniform.
        target = u * special.gammaincc(self.shape, e / self.scale)
        tail = target < _UNDERFLOW
        r = np.empty_like(e)
        r[~tail] = self.scale * special.gammainccinv(self.shape, target[~tail]) - e[~tail]
        r[tail] = -self.scale * np.log(u[tail])
        return r

    def rescaled(self, factor: float) -> Gamma:
        return Gamma(self.shape, self.scale * positive_number(factor, "factor"))


def _weibull_shape_for_cv(cv: float) -> float:
    """Weibull shape k with coefficient of variation ``cv``:
    cv^2 = Gamma(1 + 2/k) / Gamma(1 + 1/k)^2 - 1, decreasing in k."""

    def gap(log_k: float) -> float:
        k = math.exp(log_k)
        return math.expm1(special.gammaln(1 + 2 / k) - 2 * special.gammaln(1 + 1 / k)) - cv**2

    low, high = math.log(0.05), math.log(500.0)
    if not gap(high) < 0 < gap(low):
        raise PlannerError(f"sd: coefficient of variation {cv:.3g} is outside what a Weibull fits")
    return math.exp(optimize.brentq(gap, low, high, xtol=1e-14, rtol=1e-14))


@dataclass(frozen=True)
class Weibull(ParametricStay):
    """Weibull with ``shape`` k and ``scale`` lambda (days): P(S > t) = exp(-(t/lambda)^k)."""

    shape: float
    scale: float
    name: ClassVar[str] = "weibull"

    def __post_init__(self) -> None:
        positive_number(self.shape, "shape")
        positive_number(self.scale, "scale")

    @classmethod
    def from_mean_sd(cls, mean: float, sd: float) -> Weibull:
        """The Weibull with this mean and sd (days); shape solved from the CV, then
        lambda = mean / Gamma(1 + 1/k)."""
        mean, sd = positive_number(mean, "mean"), positive_number(sd, "sd")
        k = _weibull_shape_for_cv(sd / mean)
        return cls(k, mean / math.gamma(1 + 1 / k))

    @property
    def scipy(self) -> stats.rv_continuous:
        return stats.weibull_min(self.shape, scale=self.scale)

    def sample(self, rng: np.random.Generator, size: int) -> np.ndarray:
        return np.maximum(self.scale * rng.weibull(self.shape, size), MINIMUM_STAY_DAYS)

    def _remaining(self, u: np.ndarray, e: np.ndarray) -> np.ndarray:
        # Closed form, no underflow: -log P(S > t) = (t/lambda)^k, so the conditional target
        # (e/lambda)^k - log u is inverted directly.
        return self.scale * ((e / self.scale) ** self.shape - np.log(u)) ** (1 / self.shape) - e

    def rescaled(self, factor: float) -> Weibull:
        return Weibull(self.shape, self.scale * positive_number(factor, "factor"))


@dataclass(frozen=True)
class Exponential(ParametricStay):
    """Exponential with mean ``mean_days``: memoryless, the remaining stay has the same law."""

    mean_days: float
    name: ClassVar[str] = "exponential"

    def __post_init__(self) -> None:
        positive_number(self.mean_days, "mean")

    @classmethod
    def from_mean(cls, mean: float) -> Exponential:
        return cls(positive_number(mean, "mean"))

    @property
    def scipy(self) -> stats.rv_continuous:
        return stats.expon(scale=self.mean_days)

    def sample(self, rng: np.random.Generator, size: int) -> np.ndarray:
        return np.maximum(rng.exponential(self.mean_days, size), MINIMUM_STAY_DAYS)

    def _remaining(self, u: np.ndarray, e: np.ndarray) -> np.ndarray:
        return -self.mean_days * np.log(u)

    def rescaled(self, factor: float) -> Exponential:
        return Exponential(self.mean_days * positive_number(factor, "factor"))


def stays_array(stays: np.ndarray, name: str = "stays") -> np.ndarray:
    x = np.asarray(stays, dtype=float).ravel()
    if x.size == 0:
        raise PlannerError(f"{name}: no episode stays given")
    if not np.all(np.isfinite(x)) or np.any(x <= 0):
        raise PlannerError(f"{name}: every length of stay must be a finite number of days > 0")
    return x


@dataclass(frozen=True, eq=False)
class Empirical(StayDistribution):
    """Resample the observed episode stays (days), each with equal weight.

    ``mean`` and ``sd`` are those of the resampling distribution (sd with divisor n).
    Remaining stay after e days: a stay drawn among the observed stays > e, minus e. When no
    observed stay exceeds e, the remaining stay is exponential (memoryless beyond the data)
    with mean ``tail_mean_days``: the mean excess of the longest 10% of stays over their 90th
    percentile, or the overall mean if that excess is 0.
    """

    stays: np.ndarray
    tail_mean_days: float = field(init=False)
    name: ClassVar[str] = "empirical"

    def __post_init__(self) -> None:
        x = np.sort(stays_array(self.stays))
        x.setflags(write=False)
        object.__setattr__(self, "stays", x)
        threshold = np.quantile(x, 0.9)
        excess = x[x > threshold] - threshold
        tail = float(excess.mean()) if excess.size else 0.0
        object.__setattr__(self, "tail_mean_days", tail if tail > 0 else float(x.mean()))

    @property
    def mean(self) -> float:
        return float(self.stays.mean())

    @property
    def sd(self) -> float:
        return float(self.stays.std())

    def sample(self, rng: np.random.Generator, size: int) -> np.ndarray:
        return self.stays[rng.integers(0, self.stays.size, size)]

    def survival(self, t: np.ndarray) -> np.ndarray:
        n = self.stays.size
        return (n - np.searchsorted(self.stays, np.asarray(t, dtype=float), "right")) / n

    def sample_remaining(self, rng: np.random.Generator, elapsed: np.ndarray) -> np.ndarray:
        e = _elapsed_days(elapsed)
        u = _uniform_open_closed(rng, e.shape)
        n = self.stays.size
        first_longer = np.searchsorted(self.stays, e, "right")  # stays[first_longer:] > e
        longer = n - first_longer
        pick = np.minimum(first_longer + np.floor((1 - u) * longer).astype(np.intp), n - 1)
        r = np.where(longer > 0, self.stays[pick] - e, -self.tail_mean_days * np.log(u))
        return np.maximum(r, MINIMUM_STAY_DAYS)

    def rescaled(self, factor: float) -> Empirical:
        return Empirical(self.stays * positive_number(factor, "factor"))

    def describe(self) -> str:
        return f"empirical ({self.stays.size} episodes), mean {self.mean:.1f} d, sd {self.sd:.1f} d"

"""Length of stay: distributions of a patient's stay on the ward, in days.

A ``StayDistribution`` is immutable. It turns uniforms into stays (``from_uniforms``, the
inverse transform) and into the remaining stays of patients already on the ward
(``remaining_from_uniforms``), draws either from a generator (``sample``,
``sample_remaining``), gives the chance a stay lasts longer than t days (``survival``) and
rescales every stay by a factor (``rescaled``). The simulation draws its uniforms in
:mod:`planner.simulate.sampling`. Fitting them to
episodes and reading the scenario's ``[stay]`` settings is in :mod:`planner.simulate.stay_fit`.

Stays are floats > 0: a draw that would round to 0 is raised to ``MINIMUM_STAY_DAYS``.

scipy is imported where it is used (scipy.stats alone takes about half a second to import, and
a ward with empirical stays never needs it).
"""

from __future__ import annotations

import math
from abc import ABC, abstractmethod
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, ClassVar

import numpy as np

from planner.errors import PlannerError

if TYPE_CHECKING:
    from scipy import stats

#: Shortest stay returned, in days (about 0.1 ms); keeps every stay strictly positive.
MINIMUM_STAY_DAYS = 1e-9

#: Conditional survival targets below this are treated as underflow (see ``Gamma``).
_UNDERFLOW = 1e-300

PARAMETRIC_MODELS = ("lognormal", "gamma", "weibull", "exponential")
#: Families compared when ``model="best"``.
BEST_CANDIDATES = ("lognormal", "gamma", "weibull")


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

    #: True when :meth:`from_uniforms` is how stays are drawn (one uniform per stay,
    #: transformed alone), so many paths' uniforms can be transformed at once; False when
    #: :meth:`sample` draws them otherwise.
    inverse_transform: ClassVar[bool] = True

    @abstractmethod
    def from_uniforms(self, u: np.ndarray) -> np.ndarray:
        """Stays (days, > 0), one per uniform u in (0, 1]: the stay s with P(S > s) = u."""

    @abstractmethod
    def remaining_from_uniforms(self, u: np.ndarray, elapsed: np.ndarray) -> np.ndarray:
        """Remaining stays r (days, > 0) of patients already in for ``elapsed`` days, one per
        uniform u in (0, 1]: P(S > e + r | S > e) = u."""

    @abstractmethod
    def survival(self, t: np.ndarray) -> np.ndarray:
        """P(S > t) for stays t in days (array of the same shape)."""

    def sample(self, rng: np.random.Generator, size: int) -> np.ndarray:
        """``size`` independent stays, days (float array, all > 0)."""
        return self.from_uniforms(_uniform_open_closed(rng, size))

    def sample_remaining(self, rng: np.random.Generator, elapsed: np.ndarray) -> np.ndarray:
        """Remaining stays (days, > 0) of patients already in for ``elapsed`` days, one
        uniform per patient."""
        e = _elapsed_days(elapsed)
        return self.remaining_from_uniforms(_uniform_open_closed(rng, e.shape), e)

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

    def from_uniforms(self, u: np.ndarray) -> np.ndarray:
        u = np.asarray(u, dtype=float)
        return np.maximum(self._remaining(u, np.zeros_like(u)), MINIMUM_STAY_DAYS)

    def remaining_from_uniforms(self, u: np.ndarray, elapsed: np.ndarray) -> np.ndarray:
        e = _elapsed_days(elapsed)
        return np.maximum(self._remaining(np.asarray(u, dtype=float), e), MINIMUM_STAY_DAYS)

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
        from scipy import stats

        return stats.lognorm(self.sigma, scale=math.exp(self.mu))

    def from_uniforms(self, u: np.ndarray) -> np.ndarray:
        # P(S > s) = u gives log s = mu + sigma z with Phi(z) = 1 - u, that is z = -ndtri(u):
        # one inverse normal per stay (the conditional form below costs several).
        from scipy import special

        z = -special.ndtri(np.asarray(u, dtype=float))
        return np.maximum(np.exp(self.mu + self.sigma * z), MINIMUM_STAY_DAYS)

    def _remaining(self, u: np.ndarray, e: np.ndarray) -> np.ndarray:
        # In log space throughout: log P(S > t) = log_ndtr(-z(t)), inverted by ndtri_exp, so
        # the far tail (P(S > e) below 1e-308) does not underflow.
        from scipy import special

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
    #: The inverse of the gamma's survival (``gammainccinv``) costs about 0.5 us a stay; a
    #: generator draws gamma stays about twenty times faster.
    inverse_transform: ClassVar[bool] = False

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
        from scipy import stats

        return stats.gamma(self.shape, scale=self.scale)

    def sample(self, rng: np.random.Generator, size: int) -> np.ndarray:
        return np.maximum(rng.gamma(self.shape, self.scale, size), MINIMUM_STAY_DAYS)

    def _remaining(self, u: np.ndarray, e: np.ndarray) -> np.ndarray:
        # r = isf(u sf(e)) - e. When u sf(e) underflows (below 1e-300, e deep in the tail) the
        # stay is drawn from the limit of the gamma's residual life, exponential with mean
        # theta (the hazard tends to 1/theta), using the same uniform.
        from scipy import special

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
    from scipy import optimize, special

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
        from scipy import stats

        return stats.weibull_min(self.shape, scale=self.scale)

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
        from scipy import stats

        return stats.expon(scale=self.mean_days)

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

    def from_uniforms(self, u: np.ndarray) -> np.ndarray:
        n = self.stays.size
        return self.stays[np.minimum(np.floor((1 - np.asarray(u)) * n).astype(np.intp), n - 1)]

    def survival(self, t: np.ndarray) -> np.ndarray:
        n = self.stays.size
        return (n - np.searchsorted(self.stays, np.asarray(t, dtype=float), "right")) / n

    def remaining_from_uniforms(self, u: np.ndarray, elapsed: np.ndarray) -> np.ndarray:
        e = _elapsed_days(elapsed)
        u = np.asarray(u, dtype=float)
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

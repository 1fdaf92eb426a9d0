"""Length of stay learned from episodes or given in a scenario: maximum-likelihood fits, AIC
choice between families, and the scenario's change of the mean stay (one rescaling).

With stays still in progress (right-censored, see :mod:`planner.simulate.survival`) the fits
maximise the censored log-likelihood, sum of log f(x) over ended stays plus log S(x) over
censored ones, and "empirical" is the Kaplan-Meier estimate. A scenario that asks for
"empirical" stays fits no family (:func:`empirical_stays`), so it never imports scipy.stats.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from planner.errors import PlannerError
from planner.simulate.settings import StaySettings
from planner.simulate.stays import (
    BEST_CANDIDATES,
    PARAMETRIC_MODELS,
    Empirical,
    Exponential,
    Gamma,
    Lognormal,
    ParametricStay,
    StayDistribution,
    Weibull,
    stays_array,
)
from planner.simulate.survival import KaplanMeierStays, checked_stays


@dataclass(frozen=True)
class StayFit:
    """Result of ``fit_stays``: the chosen distribution, the AIC of each parametric family
    (2 k - 2 log-likelihood at the MLE, k free parameters) and the number of stays fitted."""

    distribution: StayDistribution
    aic: dict[str, float]
    n: int


def _fit_family(name: str, x: np.ndarray) -> tuple[ParametricStay, int]:
    """MLE with location fixed at 0 (scipy.stats ``fit(floc=0)``); returns (fit, k)."""
    from scipy import stats

    if name == "exponential":
        return Exponential(float(x.mean())), 1
    if name == "lognormal":
        sigma, _, scale = stats.lognorm.fit(x, floc=0)
        return Lognormal(math.log(scale), float(sigma)), 2
    if name == "gamma":
        shape, _, scale = stats.gamma.fit(x, floc=0)
        return Gamma(float(shape), float(scale)), 2
    shape, _, scale = stats.weibull_min.fit(x, floc=0)
    return Weibull(float(shape), float(scale)), 2


def fit_stays(
    stays: np.ndarray, model: str = "best", observed: np.ndarray | None = None
) -> StayFit:
    """Fit length of stay (days) by maximum likelihood.

    ``model``: a parametric family, "best" (lowest AIC among lognormal, gamma and weibull) or
    "empirical" (resample the stays). The AIC of every parametric family, exponential
    included, is reported whatever the model. ``observed`` (one bool per stay, False = still
    in progress, censored at that length) switches to :func:`fit_censored_stays`.
    """
    if observed is not None:
        return fit_censored_stays(stays, observed, model)
    x = _spread(stays_array(stays))
    fits, aic = {}, {}
    for name in PARAMETRIC_MODELS:
        fitted, k = _fit_family(name, x)
        fits[name] = fitted
        aic[name] = 2 * k - 2 * float(np.sum(fitted.scipy.logpdf(x)))
    if model == "empirical":
        chosen: StayDistribution = empirical_stays(x)
    elif model == "best":
        chosen = fits[min(BEST_CANDIDATES, key=aic.__getitem__)]
    else:
        chosen = fits[model]
    return StayFit(chosen, aic, int(x.size))


def _spread(x: np.ndarray) -> np.ndarray:
    if np.ptp(x) == 0:
        raise PlannerError("stays: all lengths of stay are equal; cannot fit a distribution")
    return x


def empirical_stays(stays: np.ndarray, observed: np.ndarray | None = None) -> StayDistribution:
    """The stays themselves (days): resampled, or with ``observed`` (False for stays still in
    progress) the Kaplan-Meier estimate; the distribution that :func:`fit_stays` chooses for
    "empirical", without fitting the parametric families."""
    if observed is None:
        return Empirical(_spread(stays_array(stays)))
    x, ended = checked_stays(stays, observed)
    return KaplanMeierStays(_spread(x), ended)


def _censored_log_likelihood(family: ParametricStay, x: np.ndarray, ended: np.ndarray) -> float:
    """Sum of log f over ended stays and log S over censored stays (days), written out per
    family (the same values as scipy.stats ``logpdf`` / ``logsf``, much faster)."""
    from scipy import special

    if isinstance(family, Lognormal):
        z = (np.log(x) - family.mu) / family.sigma
        log_f = -np.log(x[ended]) - math.log(family.sigma) - 0.5 * math.log(2 * math.pi)
        return float(np.sum(log_f - 0.5 * z[ended] ** 2) + np.sum(special.log_ndtr(-z[~ended])))
    if isinstance(family, Weibull):
        k, scale = family.shape, family.scale
        power = (x / scale) ** k
        log_f = math.log(k / scale) + (k - 1) * np.log(x[ended] / scale) - power[ended]
        return float(np.sum(log_f) - np.sum(power[~ended]))
    if isinstance(family, Gamma):
        k, scale = family.shape, family.scale
        y = x[ended]
        log_f = (k - 1) * np.log(y) - y / scale - special.gammaln(k) - k * math.log(scale)
        with np.errstate(divide="ignore"):
            log_s = np.log(special.gammaincc(k, x[~ended] / scale))
        return float(np.sum(log_f) + np.sum(log_s))
    dist = family.scipy
    return float(np.sum(dist.logpdf(x[ended])) + np.sum(dist.logsf(x[~ended])))


def _build(name: str, theta: np.ndarray) -> ParametricStay:
    """A family from unconstrained parameters (log scales; mu for the lognormal)."""
    if name == "lognormal":
        return Lognormal(float(theta[0]), float(np.exp(theta[1])))
    family = Gamma if name == "gamma" else Weibull
    return family(float(np.exp(theta[0])), float(np.exp(theta[1])))


def _start(fitted: ParametricStay) -> np.ndarray:
    if isinstance(fitted, Lognormal):
        return np.array([fitted.mu, math.log(fitted.sigma)])
    return np.log([fitted.shape, fitted.scale])


def _fit_censored_family(name: str, x: np.ndarray, ended: np.ndarray) -> tuple[ParametricStay, int]:
    """Censored MLE (days); starts from the uncensored fit of the ended stays."""
    if name == "exponential":
        # Closed form: total time on the ward over the number of ended stays.
        return Exponential(float(x.sum() / np.count_nonzero(ended))), 1
    from scipy import optimize

    done = x[ended] if np.ptp(x[ended]) > 0 else x
    start = _start(_fit_family(name, done)[0])

    def negative(theta: np.ndarray) -> float:
        try:
            value = -_censored_log_likelihood(_build(name, theta), x, ended)
        except PlannerError:
            return 1e300
        return value if math.isfinite(value) else 1e300

    best = optimize.minimize(
        negative,
        start,
        method="Nelder-Mead",
        options={"xatol": 1e-8, "fatol": 1e-10, "maxiter": 4000},
    )
    return _build(name, best.x), 2


def fit_censored_stays(durations: np.ndarray, observed: np.ndarray, model: str = "best") -> StayFit:
    """Fit length of stay (days) to ended and censored stays by censored maximum likelihood.

    ``durations``: stay lengths (days, > 0), the full stay when ``observed`` is True, the stay
    so far when False. ``model`` as in :func:`fit_stays`; "empirical" gives the Kaplan-Meier
    distribution. AIC = 2 k - 2 (censored log-likelihood at the MLE).
    """
    x, ended = checked_stays(durations, observed)
    _spread(x)
    fits, aic = {}, {}
    for name in PARAMETRIC_MODELS:
        fitted, k = _fit_censored_family(name, x, ended)
        fits[name] = fitted
        aic[name] = 2 * k - 2 * _censored_log_likelihood(fitted, x, ended)
    if model == "empirical":
        chosen: StayDistribution = KaplanMeierStays(x, ended)
    elif model == "best":
        chosen = fits[min(BEST_CANDIDATES, key=aic.__getitem__)]
    else:
        chosen = fits[model]
    return StayFit(chosen, aic, int(x.size))


def _from_mean_sd(model: str, mean: float, sd: float | None) -> StayDistribution:
    if model == "exponential":
        return Exponential.from_mean(mean)
    family = {"gamma": Gamma, "weibull": Weibull}.get(model, Lognormal)
    return family.from_mean_sd(mean, sd)


def stay_distribution(
    settings: StaySettings, stays: np.ndarray | None, observed: np.ndarray | None = None
) -> StayDistribution:
    """The length-of-stay distribution (days) a scenario asks for.

    With ``settings.mean`` (and ``sd``) the parametric family is built from them; "best" and
    "empirical" then mean lognormal (there is nothing to resample or compare). Otherwise the
    model is fitted to the episode ``stays`` (with ``observed``, False for stays still in
    progress, by censored maximum likelihood / Kaplan-Meier). Finally every stay is multiplied by
    ``(mean + change_days) / mean * scale``, so the mean becomes
    ``(mean + change_days) * scale`` and the coefficient of variation is kept.

    ``settings`` are taken as the scenario reader makes them: each key within its limits
    (:mod:`planner.schema`) and ``sd`` only with ``mean`` (:mod:`planner.scenario`).
    """
    if settings.mean is not None:
        distribution = _from_mean_sd(settings.model, settings.mean, settings.sd)
    elif stays is None or np.size(stays) == 0:
        raise PlannerError("stays: no episodes to fit the length of stay to; give stay.mean")
    elif settings.model == "empirical":
        distribution = empirical_stays(stays, observed)
    else:
        distribution = fit_stays(stays, settings.model, observed).distribution
    new_mean = (distribution.mean + settings.change_days) * settings.scale
    if new_mean <= 0:
        raise PlannerError(
            f"stay.change_days: mean stay {distribution.mean:.2f} d "
            f"{settings.change_days:+g} d gives {new_mean:.2f} d, must be > 0"
        )
    factor = new_mean / distribution.mean
    return distribution if factor == 1.0 else distribution.rescaled(factor)

"""Length of stay learned from episodes or given in a scenario: maximum-likelihood fits, AIC
choice between families, and the scenario's change of the mean stay (one rescaling)."""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy import stats

from planner.errors import PlannerError
from planner.simulate.settings import StaySettings
from planner.simulate.stays import (
    BEST_CANDIDATES,
    MODELS,
    PARAMETRIC_MODELS,
    Empirical,
    Exponential,
    Gamma,
    Lognormal,
    StayDistribution,
    Weibull,
    _Parametric,
    _positive,
    _stays_array,
)


@dataclass(frozen=True)
class StayFit:
    """Result of ``fit_stays``: the chosen distribution, the AIC of each parametric family
    (2 k - 2 log-likelihood at the MLE, k free parameters) and the number of stays fitted."""

    distribution: StayDistribution
    aic: dict[str, float]
    n: int


def _fit_family(name: str, x: np.ndarray) -> tuple[_Parametric, int]:
    """MLE with location fixed at 0 (scipy.stats ``fit(floc=0)``); returns (fit, k)."""
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


def fit_stays(stays: np.ndarray, model: str = "best") -> StayFit:
    """Fit length of stay (days) by maximum likelihood.

    ``model``: a parametric family, "best" (lowest AIC among lognormal, gamma and weibull) or
    "empirical" (resample the stays). The AIC of every parametric family, exponential
    included, is reported whatever the model.
    """
    if model not in MODELS:
        raise PlannerError(f"model must be one of {', '.join(MODELS)}; got {model!r}")
    x = _stays_array(stays)
    if np.ptp(x) == 0:
        raise PlannerError("stays: all lengths of stay are equal; cannot fit a distribution")
    fits, aic = {}, {}
    for name in PARAMETRIC_MODELS:
        fitted, k = _fit_family(name, x)
        fits[name] = fitted
        aic[name] = 2 * k - 2 * float(np.sum(fitted.scipy.logpdf(x)))
    if model == "empirical":
        chosen: StayDistribution = Empirical(x)
    elif model == "best":
        chosen = fits[min(BEST_CANDIDATES, key=aic.__getitem__)]
    else:
        chosen = fits[model]
    return StayFit(chosen, aic, int(x.size))


def _from_mean_sd(model: str, mean: float, sd: float | None) -> StayDistribution:
    mean = _positive(mean, "stay.mean")
    if model == "exponential":
        if sd is not None and not math.isclose(sd, mean, rel_tol=1e-9):
            raise PlannerError("stay.sd: an exponential stay has sd equal to its mean; omit sd")
        return Exponential.from_mean(mean)
    if sd is None:
        raise PlannerError(f"stay.sd is required with stay.mean for model {model!r}")
    sd = _positive(sd, "stay.sd")
    family = {"gamma": Gamma, "weibull": Weibull}.get(model, Lognormal)
    return family.from_mean_sd(mean, sd)


def stay_distribution(settings: StaySettings, stays: np.ndarray | None) -> StayDistribution:
    """The length-of-stay distribution (days) a scenario asks for.

    With ``settings.mean`` (and ``sd``) the parametric family is built from them; "best" and
    "empirical" then mean lognormal (there is nothing to resample or compare). Otherwise the
    model is fitted to the episode ``stays``. Finally every stay is multiplied by
    ``(mean + change_days) / mean * scale``, so the mean becomes
    ``(mean + change_days) * scale`` and the coefficient of variation is kept.
    """
    if settings.model not in MODELS:
        raise PlannerError(f"stay.model must be one of {', '.join(MODELS)}; got {settings.model!r}")
    if settings.mean is not None:
        distribution = _from_mean_sd(settings.model, settings.mean, settings.sd)
    elif settings.sd is not None:
        raise PlannerError("stay.mean is required when stay.sd is given")
    elif stays is None or np.size(stays) == 0:
        raise PlannerError("stays: no episodes to fit the length of stay to; give stay.mean")
    else:
        distribution = fit_stays(stays, settings.model).distribution
    scale = _positive(settings.scale, "stay.scale")
    if not math.isfinite(settings.change_days):
        raise PlannerError(f"stay.change_days must be a finite number, got {settings.change_days}")
    new_mean = (distribution.mean + settings.change_days) * scale
    if new_mean <= 0:
        raise PlannerError(
            f"stay.change_days: mean stay {distribution.mean:.2f} d "
            f"{settings.change_days:+g} d gives {new_mean:.2f} d, must be > 0"
        )
    factor = new_mean / distribution.mean
    return distribution if factor == 1.0 else distribution.rescaled(factor)

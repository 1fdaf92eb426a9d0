"""Closed-form moments and maximum-likelihood standard errors of the length-of-stay families.

Written out from the published formulas, independently of planner and of scipy, so the tests
can hold both to them.

Sources:
- Moments: N. L. Johnson, S. Kotz & N. Balakrishnan, Continuous Univariate Distributions,
  Vol. 1, 2nd ed. (Wiley, 1994): lognormal ch. 14 (mean exp(mu + s^2/2), variance
  (exp(s^2) - 1) exp(2 mu + s^2)), gamma ch. 17 (mean k theta, variance k theta^2), Weibull
  ch. 21 (E S^r = lambda^r Gamma(1 + r/k)).
- Standard errors: asymptotic variance of the MLE = inverse Fisher information / n (standard
  MLE theory). Per-observation information matrices:
  lognormal (mu, sigma): diag(1/sigma^2, 2/sigma^2);
  gamma (k, theta): [[psi'(k), 1/theta], [1/theta, k/theta^2]];
  Weibull (k, lambda): [[((1-g)^2 + pi^2/6)/k^2, -(1-g)/lambda], [-(1-g)/lambda, (k/lambda)^2]],
  g = Euler's constant; this gives the classical Var(k_hat) = 6 k^2/(pi^2 n) ~ 0.608 k^2/n and
  Var(lambda_hat) ~ 1.109 lambda^2/(k^2 n) (from memory; the two forms cross-check).
"""

from __future__ import annotations

import math

import numpy as np
from scipy.special import polygamma

EULER_GAMMA = 0.5772156649015329  # Euler-Mascheroni constant (from memory, 16 digits)


def lognormal_mean_sd(mu: float, sigma: float) -> tuple[float, float]:
    mean = math.exp(mu + sigma**2 / 2)
    variance = math.expm1(sigma**2) * math.exp(2 * mu + sigma**2)
    return mean, math.sqrt(variance)


def gamma_mean_sd(shape: float, scale: float) -> tuple[float, float]:
    return shape * scale, math.sqrt(shape) * scale


def weibull_mean_sd(shape: float, scale: float) -> tuple[float, float]:
    m1 = scale * math.gamma(1 + 1 / shape)
    m2 = scale**2 * math.gamma(1 + 2 / shape)
    return m1, math.sqrt(m2 - m1**2)


def _standard_errors(information: np.ndarray, n: int) -> tuple[float, float]:
    covariance = np.linalg.inv(information) / n
    return float(math.sqrt(covariance[0, 0])), float(math.sqrt(covariance[1, 1]))


def lognormal_standard_errors(mu: float, sigma: float, n: int) -> tuple[float, float]:
    """(SE of mu_hat, SE of sigma_hat) = (sigma/sqrt(n), sigma/sqrt(2n))."""
    return _standard_errors(np.diag([1 / sigma**2, 2 / sigma**2]), n)


def gamma_standard_errors(shape: float, scale: float, n: int) -> tuple[float, float]:
    """(SE of shape_hat, SE of scale_hat)."""
    trigamma = float(polygamma(1, shape))
    information = np.array([[trigamma, 1 / scale], [1 / scale, shape / scale**2]])
    return _standard_errors(information, n)


def weibull_standard_errors(shape: float, scale: float, n: int) -> tuple[float, float]:
    """(SE of shape_hat, SE of scale_hat)."""
    g = EULER_GAMMA
    information = np.array(
        [
            [((1 - g) ** 2 + math.pi**2 / 6) / shape**2, -(1 - g) / scale],
            [-(1 - g) / scale, (shape / scale) ** 2],
        ]
    )
    return _standard_errors(information, n)


# Classical constants for the Weibull MLE variances (from memory): n Var(k_hat) / k^2 and
# n Var(lambda_hat) k^2 / lambda^2.
WEIBULL_SHAPE_VARIANCE_CONSTANT = 0.608
WEIBULL_SCALE_VARIANCE_CONSTANT = 1.109

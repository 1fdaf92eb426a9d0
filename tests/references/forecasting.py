"""Reference values and formulas for the forecast engine's tests.

Sources:
- Sunspots AR(9): Stata ``var`` results for the statsmodels ``sunspots`` dataset (yearly
  sunspot activity 1700-2008), AR(9) with a constant fitted by OLS on the 300 usable rows,
  as recorded in statsmodels' own test results for AR (``ARResultsOLS``).
- Forecast-error variances of a linear AR process: Box, Jenkins, Reinsel & Ljung, Time Series
  Analysis, 5th ed., ch. 5: ``Var(e_h) = sigma^2 sum_{j<h} psi_j^2`` and, for the sum of the
  next k values, ``sigma^2 sum_{i=1..k} (sum_{j=0..k-i} psi_j)^2``; for an AR(1),
  ``psi_j = phi^j`` and ``Var(e_h) = sigma^2 (1 - phi^(2h)) / (1 - phi^2)``.
- Tabular CUSUM (Page 1954; Montgomery, Introduction to Statistical Quality Control, ch. 9;
  values from memory): with ``k = 1/2`` and ``h = 5`` the two-sided scheme's in-control
  average run length is 465 (Montgomery's table of ARL for k = 1/2, h = 4 and 5). Siegmund's
  approximation of a one-sided scheme's ARL, as Montgomery gives it:
  ``ARL = (exp(-2 D b) + 2 D b - 1) / (2 D^2)`` with ``D = delta - k`` (delta the mean shift in
  standard deviations) and ``b = h + 1.166``; for two one-sided schemes together
  ``1 / ARL = 1 / ARL+ + 1 / ARL-``.
"""

import numpy as np

# Source: Stata `var`, as recorded in statsmodels' ARResultsOLS test results.
SUNSPOTS_AR9_PARAMS = np.array(
    [
        6.7430535917332,
        1.1649421971129,
        -0.40535742259304,
        -0.16653934246587,
        0.14980629416032,
        -0.09462417064796,
        0.00491001240749,
        0.0504665930841,
        -0.08635349190816,
        0.25349103194757,
    ]
)
SUNSPOTS_AR9_LLF = -1235.559128419549
SUNSPOTS_AR9_NOBS = 300


def ar1_psi(phi: float, count: int) -> np.ndarray:
    """MA(infinity) weights of an AR(1): psi_j = phi^j, j = 0 .. count-1 (Box-Jenkins ch. 5)."""
    return phi ** np.arange(count)


def ar1_error_variance(phi: float, sigma2: float, h: int) -> float:
    """Box-Jenkins h-step forecast-error variance of an AR(1)."""
    return sigma2 * (1 - phi ** (2 * h)) / (1 - phi**2)


def sum_error_variance(psi: np.ndarray, sigma2: float, k: int) -> float:
    """Box-Jenkins error variance of the sum of the next k values:
    sigma^2 sum_{i=1..k} (sum_{j=0..k-i} psi_j)^2."""
    return sigma2 * sum(np.sum(psi[: k - i + 1]) ** 2 for i in range(1, k + 1))


# Source: Montgomery, Introduction to Statistical Quality Control, ch. 9 (from memory).
CUSUM_TWO_SIDED_ARL0_K05_H5 = 465.0


def siegmund_arl(shift: float, k: float, h: float) -> float:
    """Siegmund's approximation of a one-sided CUSUM's average run length (Montgomery ch. 9,
    from memory); ``shift`` in standard deviations (0 = in control)."""
    d, b = shift - k, h + 1.166
    return (np.exp(-2 * d * b) + 2 * d * b - 1) / (2 * d**2)

"""AR(p) with deterministic terms, fitted by ordinary least squares, and the choice of ``p``.

The regression for horizon ``h`` (days; ``h = 1`` is the usual one-step AR model) is

    y[t+h-1] = d[t+h-1] . beta + sum_{j=1..p} phi_j y[t-j] + e[t]

with ``d`` the deterministic regressors on the target day. Coefficients are ordered
deterministic terms first, then ``lag_1 .. lag_p``. With ``nobs`` rows and ``k`` regressors:
``sigma2 = SSR / nobs`` (maximum likelihood, not ``SSR / (nobs - k)``), the Gaussian
log-likelihood ``llf = -nobs/2 (log(2 pi sigma2) + 1)``, ``aic = -2 llf + 2 (k + 1)`` and
``bic = -2 llf + log(nobs) (k + 1)`` (the ``+ 1`` counts sigma2), as in statsmodels ``AutoReg``.

Order choice (:func:`select_order`) compares ``p = min_lag .. max_lag`` on ONE common sample, the
rows after ``max_lag``, as statsmodels ``ar_select_order`` does (it tries ``p = 0``, the
deterministic terms alone, too: ``min_lag = 0``), then the chosen order is refitted on all its
usable rows (all days for ``p = 0``). Every order is compared on the same rows whatever
``min_lag``, so the criteria stay comparable.

Two engines give the same numbers (within about 1e-15 relative on the demo): ``"numpy"``
(:func:`least_squares`, for the forecast and the thousands of fits inside the backtest) and
``"statsmodels"`` (statsmodels ``OLS``, the reference library, which takes about a second to
import with the scipy.stats it loads).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd
from scipy.linalg import lapack

from planner.errors import PlannerError
from planner.forecast.lags import lag_matrix


@dataclass(frozen=True)
class ArFit:
    """An OLS fit of one AR regression. ``residuals`` are in admissions per day, one per row."""

    order: int
    horizon: int
    hold_back: int
    names: tuple[str, ...]
    coefficients: np.ndarray
    residuals: np.ndarray
    nobs: int
    sigma2: float
    llf: float
    aic: float
    bic: float
    n_deterministic: int

    @property
    def params(self) -> pd.Series:
        """Coefficients by name (deterministic terms, then ``lag_1 .. lag_p``)."""
        return pd.Series(self.coefficients, index=list(self.names), name="coefficient")

    @property
    def lag_coefficients(self) -> np.ndarray:
        """``phi_1 .. phi_p``."""
        return self.coefficients[self.n_deterministic :]

    @property
    def deterministic_coefficients(self) -> np.ndarray:
        """``beta``, one per deterministic column."""
        return self.coefficients[: self.n_deterministic]


@dataclass(frozen=True)
class OrderSelection:
    """Information criteria of each candidate order on the common sample, and the choice."""

    order: int
    criterion: str
    table: pd.DataFrame  # columns: order, aic, bic, nobs


def constant_only(n: int) -> np.ndarray:
    """The deterministic matrix of a plain AR with a constant: one column of ones."""
    return np.ones((n, 1))


def design(
    values: np.ndarray,
    order: int,
    deterministic: np.ndarray,
    horizon: int = 1,
    hold_back: int | None = None,
) -> tuple[np.ndarray, np.ndarray]:
    """Regressor matrix ``[d[t+h-1], y[t-1..t-p]]`` and target ``y[t+h-1]`` for the rows of
    :func:`planner.forecast.lags.lag_matrix`."""
    lags, target = lag_matrix(values, order, horizon, hold_back)
    first_target = len(values) - target.shape[0]
    return np.hstack([deterministic[first_target:], lags]), target


#: Largest relative change the refinement step may make before the normal equations are
#: judged too ill-conditioned and the SVD solution is used instead.
REFINED_WITHIN = 1e-10


def least_squares(X: np.ndarray, y: np.ndarray) -> np.ndarray:
    """OLS coefficients of ``y`` on ``X``: the normal equations X'X b = X'y solved by Cholesky
    with one step of iterative refinement (b += (X'X)^-1 X'(y - X b)), about four times faster
    than ``numpy.linalg.lstsq`` for these tall, narrow designs and equal to it within about
    1e-13 when X is well conditioned. When the Cholesky factor fails (X'X singular) or the
    refinement moves b by more than 1e-10 of its size (X ill-conditioned, where the normal
    equations lose accuracy), ``numpy.linalg.lstsq`` (SVD, minimum norm) is used."""
    factor, failed = lapack.dpotrf(X.T @ X)  # Cholesky (LAPACK directly: these are small)
    if failed:
        return np.linalg.lstsq(X, y, rcond=None)[0]
    coefficients = lapack.dpotrs(factor, X.T @ y)[0]
    step = lapack.dpotrs(factor, X.T @ (y - X @ coefficients))[0]
    coefficients = coefficients + step
    size = np.abs(coefficients).max(initial=0.0)
    if not np.all(np.isfinite(coefficients)) or np.abs(step).max(initial=0.0) > (
        REFINED_WITHIN * size
    ):
        return np.linalg.lstsq(X, y, rcond=None)[0]
    return coefficients


def fit_ar(
    values,
    order: int,
    deterministic: np.ndarray | None = None,
    names: tuple[str, ...] | None = None,
    horizon: int = 1,
    hold_back: int | None = None,
    engine: str = "statsmodels",
) -> ArFit:
    """Fit the horizon-``h`` AR(``order``) regression by OLS.

    ``values``: the series (1-D). ``deterministic``: an ``(n, k)`` array aligned with ``values``
    (row ``i`` = regressors on day ``i``); default a constant. ``names``: names of its columns.
    """
    values = np.asarray(values, dtype=float)
    deterministic = _check_deterministic(values, deterministic)
    X, y = design(values, order, deterministic, horizon, hold_back)
    if X.shape[0] <= X.shape[1]:
        raise PlannerError(
            f"history: {len(values)} days are too few to fit {X.shape[1]} coefficients "
            f"at horizon {horizon}"
        )
    if engine == "statsmodels":
        # Imported here: statsmodels takes about a second to import, which commands that
        # never fit (check, --help) should not pay.
        from statsmodels.regression.linear_model import OLS

        result = OLS(y, X).fit()
        coefficients, residuals = np.asarray(result.params), np.asarray(result.resid)
    elif engine == "numpy":
        coefficients = least_squares(X, y)
        residuals = y - X @ coefficients
    else:
        raise PlannerError(f'engine must be "statsmodels" or "numpy", got {engine!r}')
    return _result(
        order,
        horizon,
        len(values) - X.shape[0] - horizon + 1,
        names,
        deterministic,
        coefficients,
        residuals,
    )


def information_criteria(ssr: float, nobs: int, k: int) -> tuple[float, float, float, float]:
    """``(sigma2, llf, aic, bic)`` of a Gaussian regression with ``k`` coefficients."""
    sigma2 = ssr / nobs
    llf = -nobs / 2.0 * (np.log(2.0 * np.pi * sigma2) + 1.0)
    return sigma2, llf, -2.0 * llf + 2.0 * (k + 1), -2.0 * llf + np.log(nobs) * (k + 1)


def select_order(
    values,
    max_lag: int,
    deterministic: np.ndarray | None = None,
    criterion: str = "aic",
    min_lag: int = 0,
) -> OrderSelection:
    """Choose ``p`` in ``min_lag .. max_lag`` minimising ``criterion`` ("aic" or "bic"), all orders
    fitted on the common rows after ``max_lag`` (``p = 0``: the deterministic terms alone).
    (Both are scenario keys, checked when the scenario is read: :mod:`planner.schema`.)

    One QR factorisation of the largest design serves every order: the models are nested, so the
    residual sum of squares of the first ``m`` columns is ``SSR_full + sum_{i>=m} (Q'y)_i^2``.
    """
    values = np.asarray(values, dtype=float)
    deterministic = _check_deterministic(values, deterministic)
    X, y = design(values, max_lag, deterministic)
    nobs, n_columns = X.shape
    if nobs <= n_columns:
        raise PlannerError(f"history: {len(values)} days are too few for max_lag {max_lag}")
    q, _ = np.linalg.qr(X)
    projection = q.T @ y
    ssr_full = float(np.sum((y - q @ projection) ** 2))
    tail = np.concatenate([np.cumsum((projection**2)[::-1])[::-1], [0.0]])
    k_det = deterministic.shape[1]
    rows = []
    for order in range(min_lag, max_lag + 1):
        m = k_det + order
        sigma2, llf, aic, bic = information_criteria(ssr_full + tail[m], nobs, m)
        rows.append((order, aic, bic, nobs))
    table = pd.DataFrame(rows, columns=["order", "aic", "bic", "nobs"])
    best = int(table["order"].iloc[int(np.argmin(table[criterion].to_numpy()))])
    return OrderSelection(order=best, criterion=criterion, table=table)


def fit_selected(
    values,
    max_lag: int,
    deterministic: np.ndarray | None = None,
    names: tuple[str, ...] | None = None,
    criterion: str = "aic",
    order: int | None = None,
    engine: str = "statsmodels",
    min_lag: int = 0,
) -> ArFit:
    """The one-step model: choose the order in ``min_lag .. max_lag`` (unless ``order`` is
    given), then refit that order on all its usable rows (``hold_back = order``)."""
    if order is None:
        order = select_order(values, max_lag, deterministic, criterion, min_lag).order
    return fit_ar(values, order, deterministic, names, engine=engine)


def _check_deterministic(values: np.ndarray, deterministic: np.ndarray | None) -> np.ndarray:
    if deterministic is None:
        return constant_only(values.shape[0])
    deterministic = np.asarray(deterministic, dtype=float)
    if deterministic.ndim != 2 or deterministic.shape[0] != values.shape[0]:
        raise PlannerError(
            f"deterministic must have one row per day ({values.shape[0]}), "
            f"got shape {deterministic.shape}"
        )
    return deterministic


def _result(order, horizon, hold_back, names, deterministic, coefficients, residuals) -> ArFit:
    k_det = deterministic.shape[1]
    if names is None:
        names = ("const",) if k_det == 1 else tuple(f"x{i}" for i in range(k_det))
    names = tuple(names) + tuple(f"lag_{j}" for j in range(1, order + 1))
    coefficients = np.array(coefficients, dtype=float)
    residuals = np.array(residuals, dtype=float)
    coefficients.flags.writeable = False
    residuals.flags.writeable = False
    nobs = residuals.shape[0]
    sigma2, llf, aic, bic = information_criteria(float(residuals @ residuals), nobs, len(names))
    return ArFit(
        order,
        horizon,
        hold_back,
        names,
        coefficients,
        residuals,
        nobs,
        sigma2,
        llf,
        aic,
        bic,
        k_det,
    )

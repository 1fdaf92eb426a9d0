"""The direct strategy's regressions solved together (planner.forecast.direct_fit) against the
same regressions fitted one by one."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from planner.errors import PlannerError
from planner.forecast import direct_fit
from planner.forecast.ar import fit_ar
from planner.forecast.direct_fit import direct_regressions
from planner.forecast.strategies import direct_point, fit_direct

#: Agreement asked of the joint solution (relative to the largest coefficient); rounding
#: alone differs, by about 1e-15 in these cases.
RELATIVE = 1e-10


def calendar(n: int, holidays: int = 0) -> np.ndarray:
    """Constant, six weekday dummies, two annual Fourier pairs and a sparse holiday column."""
    dates = pd.date_range("2023-01-02", periods=n, freq="D")
    t = np.arange(n)
    columns = [np.ones(n)] + [(dates.day_of_week == d).astype(float) for d in range(1, 7)]
    for k in (1, 2):
        columns += [np.sin(2 * np.pi * k * t / 365.25), np.cos(2 * np.pi * k * t / 365.25)]
    if holidays:
        holiday = np.zeros(n)
        holiday[np.arange(holidays) * (n // holidays)] = 1.0
        columns.append(holiday)
    return np.column_stack(columns)


def series(n: int, seed: int) -> np.ndarray:
    rng = np.random.default_rng(seed)
    weekly = 1 + 0.2 * (pd.date_range("2023-01-02", periods=n).day_of_week < 5)
    return rng.poisson(4.0 * weekly).astype(float)


def one_by_one(values, order, horizon, deterministic):
    return [
        fit_ar(values, order, deterministic, horizon=h, hold_back=order, engine="numpy")
        for h in range(1, horizon + 1)
    ]


def assert_agree(values, order, horizon, deterministic) -> None:
    coefficients, residuals = direct_regressions(values, order, horizon, deterministic)
    fits = one_by_one(values, order, horizon, deterministic)
    # Source: planner.forecast.ar.fit_ar fitted per horizon, itself checked against statsmodels
    # AutoReg in tests/test_forecast_ar.py.
    expected = np.array([fit.coefficients for fit in fits])
    scale = np.abs(expected).max()
    np.testing.assert_allclose(coefficients, expected, rtol=0, atol=RELATIVE * scale)
    for h, fit in enumerate(fits):
        np.testing.assert_allclose(
            residuals[h, : fit.nobs], fit.residuals, rtol=0, atol=RELATIVE * np.abs(values).max()
        )
        assert not residuals[h, fit.nobs :].any()


@pytest.mark.parametrize(
    ("order", "horizon", "days", "holidays"),
    [(0, 10, 200, 0), (1, 1, 120, 0), (2, 91, 700, 4), (7, 28, 400, 3), (28, 91, 1400, 6)],
)
def test_joint_solution_equals_separate_fits(order, horizon, days, holidays, monkeypatch):
    values = series(days, seed=order + horizon)

    def alone(*args, **kwargs):
        raise AssertionError("a well-conditioned horizon was fitted alone")

    monkeypatch.setattr(direct_fit, "fit_ar", alone)
    assert_agree(values, order, horizon, calendar(days, holidays))


def test_without_deterministic_terms_a_constant_is_used():
    values = series(300, seed=2)
    ones = np.ones((300, 1))
    np.testing.assert_array_equal(
        direct_regressions(values, 3, 12)[0], direct_regressions(values, 3, 12, ones)[0]
    )


def test_a_singular_design_falls_back_to_the_minimum_norm_fits():
    # A column repeated: X'X is singular, so each horizon is fitted alone (numpy lstsq, the
    # minimum-norm solution), as fit_ar does.
    values = series(300, seed=3)
    deterministic = calendar(300)
    deterministic = np.column_stack([deterministic, deterministic[:, 1]])
    coefficients, _ = direct_regressions(values, 2, 14, deterministic)
    expected = np.array([fit.coefficients for fit in one_by_one(values, 2, 14, deterministic)])
    np.testing.assert_array_equal(coefficients, expected)


def test_too_short_a_history_names_the_first_horizon_that_cannot_be_fitted():
    values = series(40, seed=4)
    deterministic = calendar(40)  # 11 columns + 5 lags = 16 coefficients
    with pytest.raises(PlannerError) as joint:
        direct_regressions(values, 5, 25, deterministic)
    with pytest.raises(PlannerError) as alone:
        one_by_one(values, 5, 25, deterministic)
    assert str(joint.value) == str(alone.value)


def test_direct_fit_aligns_residuals_and_forecasts_as_before():
    values = series(500, seed=5)
    deterministic = calendar(530)
    direct = fit_direct(values, 4, 30, deterministic[:500])
    fits = one_by_one(values, 4, 30, deterministic[:500])
    common = fits[-1].nobs
    aligned = np.column_stack([fit.residuals[:common] for fit in fits])
    np.testing.assert_allclose(direct.aligned_residuals(), aligned, rtol=0, atol=1e-10)
    assert direct.aligned_residuals().flags["C_CONTIGUOUS"]
    lags = values[::-1][:4]
    expected = [
        deterministic[500 + h] @ fit.deterministic_coefficients + lags @ fit.lag_coefficients
        for h, fit in enumerate(fits)
    ]
    point = direct_point(direct, values, deterministic[500:])
    np.testing.assert_allclose(point, expected, rtol=1e-10)

"""Lag matrices: shapes and entries follow the definition row t -> (y[t-1..t-p], y[t+h-1])."""

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from planner.errors import PlannerError
from planner.forecast.lags import lag_matrix, row_positions


@st.composite
def series_and_lags(draw):
    n = draw(st.integers(2, 60))
    lags = draw(st.integers(0, n - 1))
    horizon = draw(st.integers(1, n - lags))
    hold_back = draw(st.integers(lags, n - horizon))
    return np.arange(n, dtype=float) * 10 + 3, lags, horizon, hold_back


@given(series_and_lags())
def test_rows_hold_the_lags_and_the_target(case):
    # The series value at position i is 10 i + 3, so every entry names its own position.
    series, lags, horizon, hold_back = case
    X, y = lag_matrix(series, lags, horizon, hold_back)
    rows = row_positions(len(series), lags, horizon, hold_back)
    assert X.shape == (len(series) - hold_back - horizon + 1, lags)
    assert y.shape == (X.shape[0],)
    for i, t in enumerate(rows):
        assert y[i] == 10 * (t + horizon - 1) + 3
        for j in range(lags):
            assert X[i, j] == 10 * (t - 1 - j) + 3


@given(series_and_lags())
def test_last_row_targets_the_last_value(case):
    series, lags, horizon, hold_back = case
    _, y = lag_matrix(series, lags, horizon, hold_back)
    assert y[-1] == series[-1]


def test_small_worked_example():
    # By hand: y = 1, 2, 3, 4, 5; p = 2, h = 2: rows t = 2, 3 -> lags (2, 1), (3, 2);
    # targets y[3] = 4, y[4] = 5.
    X, y = lag_matrix([1, 2, 3, 4, 5], lags=2, horizon=2)
    assert X.tolist() == [[2, 1], [3, 2]]
    assert y.tolist() == [4, 5]


def test_bad_arguments_name_themselves():
    with pytest.raises(PlannerError, match="hold_back"):
        lag_matrix([1.0, 2.0, 3.0], lags=2, hold_back=1)
    with pytest.raises(PlannerError, match="horizon"):
        lag_matrix([1.0, 2.0, 3.0], lags=1, horizon=0)

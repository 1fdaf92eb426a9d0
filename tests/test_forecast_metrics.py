"""Accuracy measures on small worked examples, computed by hand from the published definitions."""

import numpy as np
import pytest

from planner.forecast import metrics


def test_mae_and_rmse():
    # errors = (3-2, 5-5, 2-4) = (1, 0, -2): MAE = 3/3 = 1; RMSE = sqrt((1 + 0 + 4)/3) = 1.29099
    assert metrics.mae([3, 5, 2], [2, 5, 4]) == pytest.approx(1.0)
    assert metrics.rmse([3, 5, 2], [2, 5, 4]) == pytest.approx(np.sqrt(5 / 3))


def test_mase_scale_uses_the_training_seasonal_naive():
    # Source: Hyndman & Koehler (2006), scale (1/(n-m)) sum_{t>m} |y_t - y_{t-m}|, m = 7.
    # training: days 1-7 = 4,5,6,5,4,3,3; days 8-9 = 6,3. |6-4| + |3-5| = 4 over n - m = 2 -> 2.
    training = [4, 5, 6, 5, 4, 3, 3, 6, 3]
    assert metrics.mase_scale(training) == pytest.approx(2.0)


def test_pinball_loss():
    # Definition: tau (y - q) if y >= q else (1 - tau)(q - y).
    # y = 10; q(0.1) = 6 -> 0.1 * 4 = 0.4; q(0.5) = 9 -> 0.5 * 1 = 0.5; q(0.9) = 12 -> 0.1 * 2 = 0.2
    # y = 3;  q(0.1) = 4 -> 0.9 * 1 = 0.9; q(0.5) = 5 -> 0.5 * 2 = 1.0; q(0.9) = 7 -> 0.1 * 4 = 0.4
    # mean over 6 cells = (0.4 + 0.5 + 0.2 + 0.9 + 1.0 + 0.4) / 6 = 3.4 / 6
    quantiles = [[6, 9, 12], [4, 5, 7]]
    assert metrics.pinball_loss([10, 3], quantiles, [0.1, 0.5, 0.9]) == pytest.approx(3.4 / 6)


def test_coverage_counts_the_bounds_as_inside():
    # y = 1, 5, 9, 4 against [2, 8], [5, 6], [1, 8], [4, 4]: out, in, out, in -> 2/4
    assert metrics.coverage([1, 5, 9, 4], [2, 5, 1, 4], [8, 6, 8, 4]) == pytest.approx(0.5)


def test_interval_score():
    # Source: Gneiting & Raftery (2007), eq. 43, alpha = 0.2 (80% interval) -> 2/alpha = 10.
    # [2, 8], y = 5: width 6, no penalty -> 6
    # [2, 8], y = 1: 6 + 10 * (2 - 1) = 16
    # [2, 8], y = 9.5: 6 + 10 * (9.5 - 8) = 21;   mean = 43 / 3
    score = metrics.interval_score([5, 1, 9.5], [2, 2, 2], [8, 8, 8], alpha=0.2)
    assert score == pytest.approx(43 / 3)

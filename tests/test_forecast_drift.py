"""The drift alarm (planner.forecast.drift): the CUSUM against its published run lengths, and on
daily admissions whose level steps up without being declared."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from level_change_data import stepped_admissions
from references.forecasting import CUSUM_TWO_SIDED_ARL0_K05_H5, siegmund_arl

from planner.forecast import drift
from planner.forecast.drift import ALLOWANCE, THRESHOLD, cusum, drift_alarm
from planner.forecast.pipeline import forecast_admissions
from planner.forecast.settings import ForecastSettings, LevelChange


def test_cusum_by_hand():
    # Source: the recursion S_t = max(0, S_{t-1} + z_t - k), S_0 = 0 (Page 1954), by hand with
    # k = 0.5: S+ = 0.5, 2.0, 0, 0.1, 2.6, 6.1; S- = 0, 0, 2.5, 1.4, 0, 0.
    upper, lower = cusum(np.array([1.0, 2.0, -3.0, 0.6, 3.0, 4.0]))
    np.testing.assert_allclose(upper, [0.5, 2.0, 0.0, 0.1, 2.6, 6.1], atol=1e-12)
    np.testing.assert_allclose(lower, [0.0, 0.0, 2.5, 1.4, 0.0, 0.0], atol=1e-12)
    # S+ passes h = 5 on the sixth day; it was last 0 on the third, so the run began on the
    # fourth.
    days = pd.date_range("2026-03-01", periods=6)
    alarm = drift_alarm(np.array([1.0, 2.0, -3.0, 0.6, 3.0, 4.0]), days[-1], 1.0)
    assert alarm.direction == "above"
    assert (alarm.started, alarm.signalled) == (days[3], days[5])
    assert "declare a level change under [[forecast.level_change]]" in alarm.message()
    # Divided by its scale the same run stays below h: no alarm.
    assert drift_alarm(np.array([1.0, 2.0, -3.0, 0.6, 3.0, 4.0]), days[-1], 2.0) is None


def run_lengths(two_sided: bool, series: int, days: int, seed: int) -> np.ndarray:
    """Days to the first signal of in-control N(0, 1) errors, days + 1 when none came."""
    rng = np.random.default_rng(seed)
    lengths = []
    for _ in range(series // 500):
        upper, lower = cusum(rng.standard_normal((500, days)))
        signal = (upper > THRESHOLD) | ((lower > THRESHOLD) if two_sided else False)
        lengths.append(np.where(signal.any(axis=1), signal.argmax(axis=1) + 1, days + 1))
    return np.concatenate(lengths)


def test_in_control_average_run_length():
    assert (ALLOWANCE, THRESHOLD) == (0.5, 5.0)
    # Run lengths are roughly geometric, so their sd is about their mean: the Monte Carlo SE of
    # the average is sd / sqrt(N), computed from the draws. Measured: two-sided 459.4 (SE 7.1,
    # 4,000 series), one-sided 964.5 (SE 22, 2,000 series).
    two = run_lengths(True, 4000, 4000, seed=1)
    assert (two > 4000).sum() == 0
    se = two.std() / np.sqrt(two.shape[0])
    # Source: Montgomery ch. 9, table of CUSUM ARLs, k = 1/2, h = 5: 465 (from memory).
    assert two.mean() == pytest.approx(CUSUM_TWO_SIDED_ARL0_K05_H5, abs=3 * se)
    # Source: Siegmund's approximation (Montgomery ch. 9, from memory): 938.2 one-sided, 469.1
    # for the two sums together.
    one_sided = siegmund_arl(0.0, ALLOWANCE, THRESHOLD)
    assert two.mean() == pytest.approx(one_sided / 2, abs=3 * se)
    one = run_lengths(False, 2000, 9000, seed=2)
    assert (one > 9000).sum() <= 2  # P(no signal in 9,000 days) ~ exp(-9000/938) ~ 7e-5
    assert one.mean() == pytest.approx(one_sided, abs=3 * one.std() / np.sqrt(one.shape[0]))
    # Over the watched 13 weeks the in-control scheme signals in about 17% of histories
    # (measured 0.173 on these draws, 0.101 within 8 weeks): a prompt to look, not a finding.
    assert (two <= drift.WINDOW_DAYS).mean() == pytest.approx(0.17, abs=0.03)


def detections(declared: bool, seeds: range) -> list:
    """(signal day - change day, direction) of each series' alarm, None without one."""
    found = []
    for seed in seeds:
        history, change = stepped_admissions(seed)
        changes = (LevelChange(change.date()),) if declared else ()
        settings = ForecastSettings(backtest_origins=13, backtest_paths=20, level_changes=changes)
        result = forecast_admissions(history, settings, 28, 50, np.random.default_rng(seed))
        alarm = result.summary.drift
        found.append(None if alarm is None else ((alarm.signalled - change).days, alarm.direction))
    return found


def test_an_undeclared_step_trips_the_alarm_within_three_weeks():
    # Known process: Poisson counts ~20/day with a weekday pattern, +25% from 8 weeks before
    # the end (tests/level_change_data.py), 20 seeded series, errors from the backtest's 13
    # weekly origins. The step is ~5 admissions/day, about 1.1 sd of the daily noise; a CUSUM
    # with k = 1/2, h = 5 needs about 10 days on average at a 1-sd shift (Montgomery's table,
    # from memory). Measured: 20 of 20 signal upwards within 21 days (median 7.5 days).
    found = detections(declared=False, seeds=range(100, 120))
    quick = [f for f in found if f is not None and f[1] == "above" and 0 <= f[0] <= 21]
    assert len(quick) >= 17, found


@pytest.mark.slow
def test_a_declared_step_rarely_trips_the_alarm():
    # Declared, the alarm watches the in-sample residuals from the change on (56 days); in
    # control the scheme signals within 56 days in about 10% of series (measured on N(0, 1)
    # draws, test_in_control_average_run_length), so 2 of 20 expected; binomial(20, 0.1)
    # gives 7 or more with probability < 0.3%. Measured: 3 of 20.
    found = detections(declared=True, seeds=range(100, 120))
    assert sum(f is not None for f in found) <= 6, found

"""The weekly shortfall table on a hand-counted example."""

from __future__ import annotations

import numpy as np
import pandas as pd

from planner.simulate.result import PATH_DAILY, WardResult
from planner.summaries.weekly import any_shortfall, mean_se, share_se, weekly_paths, weekly_table

START = pd.Timestamp("2026-11-30")


def hand_result() -> WardResult:
    """Two paths, 14 days, shifts "day" and "night". Path 0: one patient waits 3 hours on
    day 2 (week 1); path 1: two patients diverted on day 9 (week 2), when 30 beds are
    occupied. Night shift short on day 10 in path 0 only. Rostered 6 by day, 4 at night."""
    daily = {name: np.zeros((2, 14), dtype=np.int32) for name in PATH_DAILY}
    daily["wait_hours"] = np.zeros((2, 14))
    daily["peak_occupancy"][:] = 20
    daily["waited"][0, 2], daily["wait_hours"][0, 2] = 1, 3.0
    daily["diverted"][1, 9], daily["peak_occupancy"][1, 9] = 2, 30
    shortfall = np.zeros((2, 14, 2), dtype=np.int32)
    shortfall[0, 10, 1] = 1
    return WardResult(
        start=START.date(),
        first_path=0,
        **daily,
        beds_open=np.array([28] * 7 + [30] * 7, dtype=np.int32),
        shift_names=("day", "night"),
        shift_peak_occupancy=np.zeros((2, 14, 2), dtype=np.int32),
        nurses_required=np.zeros((2, 14, 2), dtype=np.int32),
        nurses_rostered=np.tile(np.array([6, 4], dtype=np.int32), (14, 1)),
        shortfall=shortfall,
    )


def test_weekly_hand_count():
    weekly = weekly_paths(hand_result(), START)
    np.testing.assert_array_equal(weekly.bed_shortfall, [[True, False], [False, True]])
    np.testing.assert_array_equal(weekly.patients_affected, [[1, 0], [0, 2]])
    np.testing.assert_array_equal(weekly.wait_hours, [[3, 0], [0, 0]])
    np.testing.assert_array_equal(weekly.peak_census, [[20, 20], [20, 30]])
    np.testing.assert_array_equal(weekly.staff_shortfall, [[False, True], [False, False]])
    np.testing.assert_array_equal(weekly.beds_open, [28, 30])
    np.testing.assert_array_equal(weekly.nurse_shifts, [70, 70])  # 7 x (6 + 4)
    np.testing.assert_array_equal(weekly.bed_days, [196, 210])  # 7 x 28, 7 x 30
    table = weekly_table(weekly)
    assert list(table["week_start"]) == ["2026-11-30", "2026-12-07"]
    np.testing.assert_allclose(table["p_bed_shortfall"], [0.5, 0.5])
    # Source: binomial standard error sqrt(p (1 - p) / n) = sqrt(0.25 / 2).
    np.testing.assert_allclose(table["p_bed_shortfall_se"], [np.sqrt(0.125)] * 2)
    np.testing.assert_allclose(table["expected_patients_affected"], [0.5, 1.0])
    np.testing.assert_allclose(table["p_staff_shortfall"], [0.0, 0.5])
    np.testing.assert_allclose(table["expected_short_shifts"], [0.0, 0.5])
    assert any_shortfall(weekly, 2)[0] == 1.0 and any_shortfall(weekly, 1)[0] == 0.5


def test_weeks_from_a_later_start_drop_the_days_before():
    # Counting from day 7 leaves one whole week (days 7-13): path 1's diversion on day 9.
    weekly = weekly_paths(hand_result(), START + pd.Timedelta(days=7))
    assert list(weekly_table(weekly)["week_start"]) == ["2026-12-07"]
    np.testing.assert_array_equal(weekly.patients_affected, [[0], [2]])
    np.testing.assert_array_equal(weekly.staff_shortfall, [[True], [False]])


def test_standard_errors():
    # Source: sd / sqrt(n) with the n - 1 sample sd; values 1, 2, 3, 4: sd = 1.2910, n = 4.
    mean, se = mean_se(np.array([[1.0], [2.0], [3.0], [4.0]]))
    np.testing.assert_allclose([mean[0], se[0]], [2.5, np.sqrt(5 / 3) / 2])
    share, se = share_se(np.array([[True], [False], [False], [False]]))
    np.testing.assert_allclose([share[0], se[0]], [0.25, np.sqrt(0.25 * 0.75 / 4)])

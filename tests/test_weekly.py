"""The weekly shortfall table on a hand-counted example."""

from __future__ import annotations

import numpy as np
import pandas as pd

from planner.report.weekly import any_shortfall, mean_se, share_se, weekly_paths, weekly_table

START = pd.Timestamp("2026-11-30")


def frames():
    """Two paths, 14 days. Path 0: one patient waits 3 hours on day 2 (week 1); path 1: two
    patients diverted on day 9 (week 2). Night shift short on day 10 in path 0 only."""
    dates = pd.date_range(START, periods=14)
    daily = pd.DataFrame(
        {
            "path": np.repeat([0, 1], 14),
            "date": np.tile(dates, 2),
            "waited": 0,
            "diverted": 0,
            "wait_hours": 0.0,
            "peak_occupancy": 20,
            "beds_open": np.tile([28] * 7 + [30] * 7, 2),
        }
    )
    daily.loc[2, ["waited", "wait_hours"]] = [1, 3.0]
    daily.loc[14 + 9, "diverted"] = 2
    daily.loc[14 + 9, "peak_occupancy"] = 30
    shifts = pd.DataFrame(
        {
            "path": np.repeat([0, 1], 28),
            "date": np.tile(np.repeat(dates, 2), 2),
            "shift": np.tile(["day", "night"], 28),
            "nurses_rostered": np.tile([6, 4], 28),
            "shortfall": 0,
        }
    )
    shifts.loc[2 * 10 + 1, "shortfall"] = 1
    return daily, shifts


def test_weekly_hand_count():
    daily, shifts = frames()
    weekly = weekly_paths(daily, shifts, START)
    np.testing.assert_array_equal(weekly.bed_shortfall, [[True, False], [False, True]])
    np.testing.assert_array_equal(weekly.patients_affected, [[1, 0], [0, 2]])
    np.testing.assert_array_equal(weekly.wait_hours, [[3, 0], [0, 0]])
    np.testing.assert_array_equal(weekly.peak_census, [[20, 20], [20, 30]])
    np.testing.assert_array_equal(weekly.staff_shortfall, [[False, True], [False, False]])
    np.testing.assert_array_equal(weekly.beds_open, [28, 30])
    np.testing.assert_array_equal(weekly.nurse_shifts, [70, 70])  # 7 x (6 + 4)
    table = weekly_table(weekly)
    assert list(table["week_start"]) == ["2026-11-30", "2026-12-07"]
    np.testing.assert_allclose(table["p_bed_shortfall"], [0.5, 0.5])
    # Source: binomial standard error sqrt(p (1 - p) / n) = sqrt(0.25 / 2).
    np.testing.assert_allclose(table["p_bed_shortfall_se"], [np.sqrt(0.125)] * 2)
    np.testing.assert_allclose(table["expected_patients_affected"], [0.5, 1.0])
    np.testing.assert_allclose(table["p_staff_shortfall"], [0.0, 0.5])
    np.testing.assert_allclose(table["expected_short_shifts"], [0.0, 0.5])
    assert any_shortfall(weekly, 2)[0] == 1.0 and any_shortfall(weekly, 1)[0] == 0.5


def test_standard_errors():
    # Source: sd / sqrt(n) with the n - 1 sample sd; values 1, 2, 3, 4: sd = 1.2910, n = 4.
    mean, se = mean_se(np.array([[1.0], [2.0], [3.0], [4.0]]))
    np.testing.assert_allclose([mean[0], se[0]], [2.5, np.sqrt(5 / 3) / 2])
    share, se = share_se(np.array([[True], [False], [False], [False]]))
    np.testing.assert_allclose([share[0], se[0]], [0.25, np.sqrt(0.25 * 0.75 / 4)])

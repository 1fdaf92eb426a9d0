"""The table by shift and weekday on a hand-counted example (tests/test_weekly.py's ward)."""

from __future__ import annotations

import numpy as np
import pandas as pd
from test_weekly import START, hand_result

from planner.summaries.shift_weekdays import shift_weekday_table


def test_shift_weekday_hand_count():
    # 2026-11-30 is a Monday, so day 10 (10 Dec) is a Thursday: the night shift of that
    # Thursday is short in path 0 of 2, one of the 2 Thursdays. Path 0's share of Thursday
    # nights short is 1/2, path 1's 0: the chance is 1/4, its error the spread of (1/2, 0)
    # over sqrt(2): sd = sqrt(1/8), se = sqrt(1/8) / sqrt(2) = 1/4.
    result = hand_result()
    peaks = np.zeros((2, 14, 2), dtype=np.int32)
    peaks[1, 9, 0] = 30  # path 1's Wednesday 9 Dec day shift fills all 30 beds open
    peaks[0, 1, 0] = 27  # path 0's Tuesday 1 Dec day shift: 27 of 28 beds, not full
    result = type(result)(**{**result.__dict__, "shift_peak_occupancy": peaks})
    table = shift_weekday_table(result, START).set_index(["shift", "weekday"])
    assert len(table) == 14 and (table["days"] == 2).all()
    thursday_night = table.loc[("night", "Thursday")]
    assert thursday_night["p_short"] == 0.25
    assert np.isclose(thursday_night["p_short_se"], 0.25)
    assert thursday_night["expected_shortfall"] == 0.25  # 1 nurse on 1 of 4 path-days
    assert table["p_short"].drop(("night", "Thursday")).eq(0).all()
    assert table.loc[("day", "Monday"), "nurses_rostered"] == 6
    assert table.loc[("night", "Monday"), "nurses_rostered"] == 4
    assert table.loc[("day", "Wednesday"), "p_full"] == 0.25
    assert table.loc[("day", "Tuesday"), "p_full"] == 0.0
    assert table.loc[("day", "Wednesday"), "beds_open"] == 29.0  # 28 then 30


def test_a_later_start_drops_the_days_before():
    table = shift_weekday_table(hand_result(), START + pd.Timedelta(days=7))
    assert (table["days"] == 1).all()
    thursday_night = table.set_index(["shift", "weekday"]).loc[("night", "Thursday")]
    assert thursday_night["p_short"] == 0.5

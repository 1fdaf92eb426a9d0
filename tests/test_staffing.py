"""Staffing: nurses required by ratio and minimum, rosters, and shift validation."""

from __future__ import annotations

from datetime import date

import numpy as np
import pytest

from planner.errors import PlannerError
from planner.simulate.settings import RosterOverride, Shift, StaffingSettings
from planner.simulate.staffing import (
    nurses_required,
    rostered_nurses,
    shortfall,
    validate_staffing,
)
from tests.references.queueing import STAFFING_EXAMPLES

WEEK = (1, 1, 1, 1, 1, 1, 1)


@pytest.mark.parametrize(("patients", "ratio", "minimum", "nurses"), STAFFING_EXAMPLES)
def test_worked_examples(patients, ratio, minimum, nurses):
    # Source: Queensland ratios 1:4 day / 1:7 night; NICE SG1 minimum of 2 registered nurses.
    assert nurses_required(np.array([patients]), ratio, minimum)[0] == nurses


def test_required_is_the_ceiling_of_the_ratio():
    # Source: the ratio is a maximum number of patients per nurse (Cal. Code Regs. tit. 22,
    # section 70217, "at all times"): 29 patients at 1:4 need a 8th nurse, 0 patients none.
    peak = np.array([0, 1, 4, 5, 28, 29])
    np.testing.assert_array_equal(nurses_required(peak, 4.0, 0), [0, 1, 1, 2, 7, 8])
    np.testing.assert_array_equal(nurses_required(peak, 4.0, 2), [2, 2, 2, 2, 7, 8])
    assert nurses_required(peak, 4.0, 2).dtype == np.int32


def test_shortfall_is_never_negative():
    np.testing.assert_array_equal(shortfall(np.array([7, 4, 2]), np.array([5, 4, 3])), [2, 0, 0])


def test_roster_by_weekday_with_overrides():
    # Source: calendar fact (from memory, checked by datetime): 1 January 2024 was a Monday.
    assert date(2024, 1, 1).weekday() == 0
    staffing = StaffingSettings(
        shifts=(
            Shift("day", 7, 19, 4, (5, 5, 5, 5, 5, 4, 4)),
            Shift("night", 19, 7, 7, (3, 3, 3, 3, 3, 2, 2)),
        ),
        overrides=(RosterOverride(date(2024, 1, 3), date(2024, 1, 4), "night", 6),),
    )
    rostered = rostered_nurses(staffing, date(2024, 1, 1), 8)
    np.testing.assert_array_equal(rostered[:, 0], [5, 5, 5, 5, 5, 4, 4, 5])
    np.testing.assert_array_equal(rostered[:, 1], [3, 3, 6, 6, 3, 2, 2, 3])


def test_default_and_three_shift_days_are_valid():
    validate_staffing(StaffingSettings())
    validate_staffing(
        StaffingSettings(
            shifts=(
                Shift("early", 7, 15, 4, WEEK),
                Shift("late", 15, 23, 4, WEEK),
                Shift("night", 23, 7, 7, WEEK),
            )  # fmt: skip
        )
    )
    validate_staffing(StaffingSettings(shifts=(Shift("all day", 8, 8, 5, WEEK),)))


def test_overlapping_shifts_are_named():
    staffing = StaffingSettings(
        shifts=(Shift("day", 7, 20, 4, WEEK), Shift("night", 19, 7, 7, WEEK))
    )
    with pytest.raises(PlannerError, match="'day'.*overlaps 'night'"):
        validate_staffing(staffing)


def test_gap_between_shifts_is_named():
    staffing = StaffingSettings(
        shifts=(Shift("day", 7, 19, 4, WEEK), Shift("night", 20, 7, 7, WEEK))
    )
    with pytest.raises(PlannerError, match="gap between 'day'.*'night'"):
        validate_staffing(staffing)


# Each value's own limits (ratios, rosters, nurses) and the shift an override names are
# checked when the scenario is read: tests/test_scenario.py.
@pytest.mark.parametrize(
    ("shifts", "message"),
    [
        (
            (Shift("day", 7, 19, 4, WEEK), Shift("day", 19, 7, 7, WEEK)),
            "staffing.shift: shift names must differ ('day' is used more than once)",
        ),
        ((), "staffing.shift: at least one shift is needed"),
    ],
)
def test_shifts_across_the_day_are_checked(shifts, message):
    with pytest.raises(PlannerError) as error:
        validate_staffing(StaffingSettings(shifts=shifts))
    assert str(error.value) == message

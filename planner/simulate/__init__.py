"""planner/simulate: arrivals, length of stay, the ward model (SimPy), staffing and queueing."""

from planner.simulate.queueing import (
    erlang_b,
    erlang_c,
    infinite_server_mean,
    inpatients_remaining_mean,
)
from planner.simulate.staffing import (
    nurses_required,
    rostered_nurses,
    shortfall,
    validate_staffing,
)
from planner.simulate.ward import WardResult, beds_open_by_day, simulate_ward

__all__ = [
    "WardResult",
    "beds_open_by_day",
    "erlang_b",
    "erlang_c",
    "infinite_server_mean",
    "inpatients_remaining_mean",
    "nurses_required",
    "rostered_nurses",
    "shortfall",
    "simulate_ward",
    "validate_staffing",
]

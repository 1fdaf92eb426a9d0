"""planner/simulate: arrivals, length of stay, the ward model (SimPy), staffing and queueing.

The names below are loaded on first use (PEP 562), so that reading a scenario, which needs
only :mod:`planner.simulate.settings`, does not import the ward model, its compiler or scipy.
"""

from __future__ import annotations

import importlib

_SOURCES = {
    "erlang_b": "queueing",
    "erlang_c": "queueing",
    "infinite_server_mean": "queueing",
    "inpatients_remaining_mean": "queueing",
    "nurses_required": "staffing",
    "rostered_nurses": "staffing",
    "shortfall": "staffing",
    "validate_staffing": "staffing",
    "WardResult": "ward",
    "beds_open_by_day": "ward",
    "simulate_ward": "ward",
}

__all__ = sorted(_SOURCES)


def __getattr__(name: str):
    if name not in _SOURCES:
        raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
    return getattr(importlib.import_module(f"planner.simulate.{_SOURCES[name]}"), name)


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(_SOURCES))

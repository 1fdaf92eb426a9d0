"""Dated level changes (``[[forecast.level_change]]``): their checks against the history and
the announced changes applied to the paths. (Loads no fitting code: the scenario check uses it.)

Inside the history a change is a step column of the fit (0 before its date, 1 from it;
:mod:`planner.forecast.deterministic`), so the level after it is estimated from the days after
it and the level before it from the days before; :mod:`planner.forecast.level_uncertainty`
carries that estimate's uncertainty into the paths.

After the history a change is announced: the paths are multiplied by ``1 + relative_change``
from its date on (as ``demand.growth`` multiplies them, so the spread follows the level).

Where the whole history is known (:func:`check_level_changes`, when the scenario's files are
read) a change after the history must state its relative change, and a change inside it needs
max_lag (or order) + the forecast days of history before it, so that the step varies within
every regression the forecast and the backtest fit (the direct regression for day h sees the
target days from p + h - 1 on). The forecast engine applies the same rule
(:func:`announced_changes`), except that on a history cut at an earlier date (a hindcast) a
change after the cut without a relative change is not known yet: it forecasts without it (one
with a relative change is applied as announced). The backtest leaves a step out at origins
before its date (the change is not in their training data) and applies no stated sizes: it
scores the model, not the scenario.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from planner.errors import PlannerError
from planner.forecast.requirements import fit_lag


def days_before_needed(settings, forecast_days: int) -> tuple[int, str]:
    """Days of history a change inside it needs before its date, and how they are made up."""
    lag, name = fit_lag(settings)
    return lag + forecast_days, f"{name} {lag} + {forecast_days} forecast days"


def _checked(number: int, change, dates, settings, forecast_days: int, where: str) -> str:
    """``"inside"`` or ``"after"`` the history; refuses a date before the history or too close
    to its start."""
    first, last = pd.Timestamp(dates[0]), pd.Timestamp(dates[-1])
    day = pd.Timestamp(change.date)
    at = f"{where}forecast.level_change[{number}].date"
    if day < first:
        raise PlannerError(
            f"{at}: {day.date()} is before the history's first day ({first.date()}); remove "
            f"it or give a history that starts before it"
        )
    if day > last:
        return "after"
    needed, reason = days_before_needed(settings, forecast_days)
    before = (day - first).days
    if before < needed:
        raise PlannerError(
            f"{at}: {day.date()} leaves {before} days of history before it, a change inside "
            f"the history needs at least {needed} ({reason}) to fit the level before it; "
            f"remove it (the days after it show the new level) or give a longer history"
        )
    return "inside"


def check_level_changes(dates: pd.DatetimeIndex, settings, forecast_days: int, source) -> None:
    """Refuse level changes the whole history (``dates``) cannot take: before its first day,
    too close to it, or after its last day without ``relative_change``. ``source`` (the
    scenario file) starts every message."""
    for number, change in enumerate(settings.level_changes, start=1):
        where = _checked(number, change, dates, settings, forecast_days, f"{source}: ")
        if where == "after" and change.relative_change is None:
            raise PlannerError(
                f"{source}: forecast.level_change[{number}].relative_change: required for a "
                f"change after the history ends ({pd.Timestamp(dates[-1]).date()}); give the "
                f"expected change, e.g. 0.1 for +10%"
            )


def announced_changes(settings, dates: pd.DatetimeIndex, forecast_days: int) -> tuple:
    """The changes after the history with a stated relative change (applied to the paths by
    :func:`level_multipliers`); refuses dates the history cannot take as
    :func:`check_level_changes` does. Changes inside the history are step columns
    (:func:`planner.forecast.deterministic.terms_for_history`)."""
    announced = []
    for number, change in enumerate(settings.level_changes, start=1):
        where = _checked(number, change, dates, settings, forecast_days, "")
        if where == "after" and change.relative_change is not None:
            announced.append(change)
    return tuple(announced)


def level_multipliers(dates: pd.DatetimeIndex, announced) -> np.ndarray:
    """``(H,)`` product of ``1 + relative_change`` of the announced changes dated on or before
    each day."""
    days = pd.DatetimeIndex(dates).normalize()
    multiplier = np.ones(len(days))
    for change in announced:
        multiplier[np.asarray(days >= pd.Timestamp(change.date))] *= 1.0 + change.relative_change
    return multiplier

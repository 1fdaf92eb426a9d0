"""Reading the scenario tables that say how patients come and go: ``[stay]``, ``[discharge]``
and ``[planned]``, into their settings (:mod:`planner.simulate.settings`)."""

from __future__ import annotations

import math
from pathlib import Path
from typing import Any

from planner.errors import PlannerError
from planner.schema_checks import table_values
from planner.simulate.settings import DischargeSettings, PlannedSettings, StaySettings


def clock_hours(text: str) -> float:
    """Hours after 00:00 of a "HH:MM" time (validated by the schema)."""
    hours, minutes = text.split(":")
    return int(hours) + int(minutes) / 60.0


def read_stay(document: dict[str, Any], where: str) -> StaySettings:
    values = table_values(document, "stay")
    model, mean, sd = values["model"], values["mean"], values["sd"]
    if sd is not None and mean is None:
        raise PlannerError(f"{where}: stay.sd: given without stay.mean")
    if model == "exponential" and sd is not None and not math.isclose(sd, mean, rel_tol=1e-9):
        raise PlannerError(
            f"{where}: stay.sd: an exponential stay has sd equal to its mean; omit sd"
        )
    if mean is not None and sd is None and model != "exponential":
        raise PlannerError(f"{where}: stay.sd: required with stay.mean for model {model!r}")
    return StaySettings(
        values["model"],
        values["mean"],
        values["sd"],
        float(values["change_days"]),
        float(values["scale"]),
    )


def read_discharge(
    document: dict[str, Any], where: str, calendar_possible: bool
) -> DischargeSettings:
    """The ``[discharge]`` table (``calendar_possible``: episodes are given and stay.mean is
    not). "auto" is kept: it is resolved when the episodes are fitted."""
    values = table_values(document, "discharge")
    timing, earlier, seven_day = values["timing"], values["earlier_hours"], values["seven_day"]
    noon = values["before_noon"]
    if earlier > 23:
        raise PlannerError(f"{where}: discharge.earlier_hours: must be 0 to 23, got {earlier}")
    for name, share in (("seven_day", seven_day), ("before_noon", noon)):
        if share > 1:
            raise PlannerError(f"{where}: discharge.{name}: must be 0 to 1, got {share}")
    if timing == "calendar" and not calendar_possible:
        raise PlannerError(
            f'{where}: discharge.timing: "calendar" learns discharges from history.episodes '
            f"and cannot be used with stay.mean or without episodes"
        )
    if (earlier or seven_day or noon) and (timing == "continuous" or not calendar_possible):
        lever = "earlier_hours" if earlier else "seven_day" if seven_day else "before_noon"
        raise PlannerError(
            f"{where}: discharge.{lever}: acts on calendar discharge timing, which this "
            f"scenario does not use (it needs history.episodes, no stay.mean and "
            f'discharge.timing "auto" or "calendar")'
        )
    if timing == "auto" and not calendar_possible:
        timing = "continuous"
    return DischargeSettings(timing, int(earlier), float(seven_day), float(noon))


def read_planned(document: dict[str, Any], where: str) -> PlannedSettings:
    values = table_values(document, "planned")
    mean, sd = values["stay_mean"], values["stay_sd"]
    if (mean is None) != (sd is None):
        given = "stay_mean" if sd is None else "stay_sd"
        other = "stay_sd" if sd is None else "stay_mean"
        raise PlannerError(f"{where}: planned.{given}: given without planned.{other}")
    booked, bookings = values["list"], values["bookings"]
    if booked is None and bookings is None:
        if "planned" in document:
            raise PlannerError(f"{where}: planned.list: required in a [planned] table without "
                               f"planned.bookings")  # fmt: skip
        return PlannedSettings()
    hour = clock_hours(values["admission_time"])
    if hour >= 24:
        raise PlannerError(f"{where}: planned.admission_time: must be before 24:00")
    return PlannedSettings(
        tuple(int(n) for n in booked or (0,) * 7), hour, values["when_full"],
        None if mean is None else float(mean), None if sd is None else float(sd),
        None if bookings is None else Path(bookings),
    )  # fmt: skip

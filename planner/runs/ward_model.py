"""The simulated ward built from a scenario and its records: beds, policy and rota from the
scenario; length of stay, calendar discharge timing, the patients on the ward and the
hour-of-day profile of emergency arrivals learned from the history; the planned list with its
stays."""

from __future__ import annotations

from planner.errors import PlannerError
from planner.records.bookings import read_bookings
from planner.records.ward_history import WardHistory
from planner.scenario import Scenario
from planner.simulate.discharge_fit import DischargeTiming, fit_discharge_timing
from planner.simulate.model import WardModel
from planner.simulate.planned import PlannedList
from planner.simulate.settings import StaySettings

#: Fewest completed planned episodes to learn planned stays from.
MINIMUM_PLANNED_STAYS = 20


def ward_model(scenario: Scenario, history: WardHistory) -> WardModel:
    """The simulated ward: the scenario's beds, policy and rota, with the length of stay (and
    with calendar timing the discharges' days and hours), the patients on the ward and the
    hour-of-day profile learned from the history; with a planned list, the planned stream,
    and the emergency stays and discharges learned from the emergency episodes alone."""
    from planner.simulate.arrivals import hour_profile
    from planner.simulate.stay_fit import stay_distribution

    planned = scenario.planned.given
    emergency = emergency_history(scenario, history)
    stays, observed = emergency.stays()
    admitted = None if emergency.episodes is None else emergency.episodes["admitted_at"]
    discharges, note = discharge_timing(scenario, emergency)
    return WardModel(
        start=history.first_day.date(),
        settings=scenario.ward,
        stays=stay_distribution(scenario.stay, stays, observed),
        inpatients_elapsed=history.inpatients_elapsed(),
        hour_profile=hour_profile(admitted),
        discharges=discharges,
        timing_note=note,
        planned=planned_list(scenario, history) if planned else None,
    )


def emergency_history(scenario: Scenario, history: WardHistory) -> WardHistory:
    """The history the emergency stays and discharges are learned from: the emergency
    episodes alone when the scenario simulates planned patients as their own stream."""
    return history.of_method("emergency") if scenario.planned.given else history


def planned_list(scenario: Scenario, history: WardHistory) -> PlannedList:
    """The scenario's planned list with its stays: given (lognormal from planned.stay_mean and
    stay_sd), or learned from the planned episodes with stay.model."""
    from planner.simulate.stay_fit import stay_distribution

    settings = scenario.planned
    if settings.stay_mean is not None:
        stay = StaySettings("lognormal", settings.stay_mean, settings.stay_sd)
        stays = stay_distribution(stay, None)
    else:
        episodes = history.episodes
        if episodes is None or "method" not in episodes:
            raise PlannerError(
                f"{scenario.source}: planned.stay_mean: needed (with planned.stay_sd) when the "
                f"episodes carry no admission method to learn planned stays from"
            )
        known, observed = history.of_method("planned").stays()
        if known is None or observed.sum() < MINIMUM_PLANNED_STAYS:
            raise PlannerError(
                f"{scenario.episodes_file}: only {0 if known is None else int(observed.sum())} "
                f"completed planned episodes, need {MINIMUM_PLANNED_STAYS} to learn planned "
                f"stays; give planned.stay_mean and planned.stay_sd"
            )
        stays = stay_distribution(StaySettings(scenario.stay.model), known, observed)
    bookings = None if settings.bookings is None else read_bookings(settings.bookings)
    return PlannedList(settings.per_weekday, settings.admission_hour, stays, settings.when_full,
                       bookings)  # fmt: skip


def discharge_timing(
    scenario: Scenario, history: WardHistory
) -> tuple[DischargeTiming | None, str]:
    """The calendar discharge timing learned from the episodes known at the start, with the
    scenario's stay changes and levers, or None for stays as durations; and a note when
    ``discharge.timing = "auto"`` found the episodes too few for calendar timing.
    stay.change_days and stay.scale act on the mean stay in nights: (fitted mean +
    change_days) x scale."""
    settings = scenario.discharge
    if settings.timing == "continuous":
        return None, ""
    try:
        timing = fit_discharge_timing(history.episodes, history.first_day)
    except PlannerError as error:
        if settings.timing == "auto" and not settings.levers:
            return None, f"stays drawn as durations: calendar discharge timing not fitted ({error})"
        raise PlannerError(
            f"{scenario.episodes_file}: {error}; or set discharge.timing = "
            f'"continuous" to draw stays as durations'
        ) from None
    change = scenario.stay
    if change.change_days != 0.0 or change.scale != 1.0:
        timing = timing.with_mean_nights((timing.mean_stay + change.change_days) * change.scale)
    if settings.seven_day:
        timing = timing.seven_day(settings.seven_day)
    if settings.earlier_hours:
        timing = timing.earlier(settings.earlier_hours)
    if settings.before_noon:
        try:
            timing = timing.before_noon(settings.before_noon)
        except PlannerError as error:
            raise PlannerError(f"{scenario.source}: discharge.before_noon: {error}") from None
    return timing, ""

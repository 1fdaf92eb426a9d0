"""The "Key assumptions" of the run report: the history, the forecast model, the stays and
discharges, the ward plan (beds, shifts, demand changes) and the latest hindcast."""

from __future__ import annotations

from planner.report.html import CACHED_BACKTEST
from planner.results import HindcastQuote, RunResult
from planner.simulate.discharge_fit import describe_discharges


def clock(hour: float) -> str:
    """An hour of the day (7.5) as a 24-hour clock time ("07:30")."""
    minutes = round(hour * 60) % (24 * 60)
    return f"{minutes // 60:02d}:{minutes % 60:02d}"


def _ward_plan(scenario) -> list[tuple[str, str]]:
    ward = scenario.ward
    changes = (
        "; ".join(f"{c.change:+d} beds {c.start} to {c.end}" for c in ward.bed_changes) or "none"
    )
    shifts = "; ".join(
        f"{s.name} {clock(s.start_hour)}-{clock(s.end_hour)}, 1 nurse per "
        f"{s.patients_per_nurse:g} patients, registered nurses rostered Mon-Sun "
        f"{', '.join(str(n) for n in s.roster)}"
        for s in ward.staffing.shifts
    )
    demand = scenario.forecast.demand
    surges = "; ".join(f"x{s.factor:g} {s.start} to {s.end}" for s in demand.surges)
    return [
        ("Beds", f"{ward.beds} base; dated changes: {changes}; no free bed: {ward.policy}"),
        ("Shifts", f"{shifts}; at least {ward.staffing.minimum_nurses} nurses per shift"),
        (
            "Demand changes",
            f"growth {demand.growth:+.1%}" + (f"; surges {surges}" if surges else ""),
        ),
    ]


NO_DRIFT = (
    "No drift signalled: the CUSUM of the last 13 weeks of one-step errors (k = 0.5, h = 5 "
    "standard deviations) stayed inside its limits in both directions."
)
#: What the level-change and drift features do, in two sentences each.
LEVEL_CHANGE_NOTE = (
    "If you know the date demand changed (a new unit, a changed catchment), declare it under "
    "[[forecast.level_change]]: the forecast then learns the new level from the days since "
    "that date instead of averaging it with the years before, and the uncertainty of that "
    "estimate widens the bands. A change still to come is applied from its date with the size "
    "you give (relative_change, e.g. 0.25 for +25%)."
)
DRIFT_NOTE = (
    "The drift alarm watches the last 13 weeks of one-day-ahead errors and warns when "
    "admissions have run persistently above or below the model, naming the direction and the "
    "day the run began. It only warns and never changes the forecast; about one history in "
    "six alarms by chance, so check whether demand really changed and, if so, declare a level "
    "change from that date."
)


def _level_changes(summary) -> list[tuple[str, str]]:
    """The "Level changes" item: estimated inside the history, announced after it."""
    parts = [
        f"from {change.date.date()} estimated at {change.per_day:+.1f} admissions/day "
        f"(standard error {change.standard_error:.1f}, drawn into the paths)"
        for change in summary.level_changes
    ]
    parts += [
        f"from {change.date} announced {change.relative_change:+.1%}"
        for change in summary.announced_changes
    ]
    return [("Level changes", "; ".join(parts))] if parts else []


NO_HINDCAST = (
    "No hindcast has been run for this setup: the census forecast has not yet been checked "
    "against past dates (planner hindcast)."
)


def _inpatients(run) -> str:
    if run.history.episodes is None:
        return (
            "None known (no episode file): the simulated ward starts empty, so the first "
            "weeks understate the census."
        )
    text = (
        f"{len(run.model.inpatients_elapsed)} patients on the ward at 00:00 on "
        f"{run.history.first_day.date()}, remaining stays drawn given the time already spent"
    )
    if run.history.gap_days:
        text += (
            f"; the ward is simulated from then, {run.history.gap_days} days before the "
            f"reported weeks start"
        )
    return text


def hindcast_line(quote: HindcastQuote | None) -> str:
    """The sentence on the latest hindcast of this setup."""
    if quote is None:
        return NO_HINDCAST
    return (
        f"Over the last {quote.weeks} weeks ({quote.origins} past start dates, hindcast of "
        f"{quote.created}), the 80% census band of this setup held {quote.coverage_80:.0%} of "
        f"days."
    )


def assumptions(run: RunResult, hindcast: HindcastQuote | None = None) -> list[tuple[str, str]]:
    """Key assumptions of the run, as (term, description) pairs for the report;
    ``hindcast`` quotes the latest hindcast of this setup, if any."""
    summary = run.forecast.summary
    items = [
        (
            "History",
            f"{len(run.history.admissions)} days of admissions, "
            f"{run.history.admissions.index[0].date()} to {run.history.last_day.date()}",
        ),
        (
            "Forecast model",
            f"AR({summary.order}) with calendar terms, order by "
            f"{summary.criterion.upper()}, {summary.strategy} strategy, "
            f"{summary.residuals.replace('_', '-')} residual bootstrap, "
            f"{'a linear trend' if summary.trend else 'no trend'} (forecast.trend), spread "
            f"{'following the level' if summary.spread == 'level' else 'constant'} "
            f"(forecast.spread), {run.paths} paths",
        ),
        *_level_changes(summary),
        ("Drift check", summary.drift.message() if summary.drift else NO_DRIFT),
        ("Level changes and drift", f"{LEVEL_CHANGE_NOTE} {DRIFT_NOTE}"),
    ]
    if summary.backtest is not None:
        overall = summary.backtest.overall()
        row = overall.loc[summary.strategy]
        naive = overall.loc["seasonal_naive"]
        items.append(
            (
                "Backtest",
                (
                    f"{len(summary.backtest.origins)} rolling origins: MASE {row['mase']:.2f} "
                    f"(same weekday last week: {naive['mase']:.2f}), 80% interval held "
                    f"{row['coverage_80']:.0%} of days, 95% interval {row['coverage_95']:.0%}"
                    + (f"; {CACHED_BACKTEST}" if summary.backtest.from_cache else "")
                ),
            )
        )
    items += [
        ("Length of stay", run.model.stays.describe()),
        ("Discharges", describe_discharges(run.model.discharges, run.model.timing_note)),
        *_planned(run),
        ("Current inpatients", _inpatients(run)),
        *_ward_plan(run.scenario),
        ("Hindcast", hindcast_line(hindcast)),
    ]
    return items


def _planned(run: RunResult) -> list[tuple[str, str]]:
    """The planned list, when the ward has one."""
    if run.model.planned is None:
        return []
    return [("Planned admissions", f"{run.model.planned.describe()}; the forecast covers "
             f"emergency admissions only")]  # fmt: skip

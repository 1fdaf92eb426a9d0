"""The run report: files, charts and the page written by ``planner run``."""

from __future__ import annotations

from pathlib import Path

import pandas as pd

from planner.report import charts, html, sizing_report
from planner.report.files import run_record, write_csv, write_json
from planner.report.html import CACHED_BACKTEST
from planner.results import HindcastQuote, RunResult
from planner.simulate.discharge_fit import describe_discharges

WEEKLY_NOTE = (
    "<p>Probabilities are shares of the simulated paths, with their Monte Carlo standard "
    "error; counts and hours are means over paths. Patients finding no free bed waited for "
    "one or were placed elsewhere. All columns are in weekly.csv.</p>"
)

#: Columns of the weekly table printed in the terminal, with their short headers.
TERMINAL_COLUMNS = {
    "week_start": "week from",
    "p_bed_shortfall": "P(no bed)",
    "expected_patients_affected": "affected",
    "expected_wait_hours": "wait h",
    "peak_census_p50": "peak p50",
    "peak_census_p90": "peak p90",
    "beds_open": "beds",
    "p_staff_shortfall": "P(short staff)",
    "expected_short_shifts": "short shifts",
}


#: Columns added with a planned list.
PLANNED_TERMINAL_COLUMNS = {"expected_cancelled": "cancelled", "p_cancellation": "P(cancel)"}


def terminal_table(weekly: pd.DataFrame) -> str:
    """The weekly table as aligned text for the terminal."""
    columns = TERMINAL_COLUMNS | (PLANNED_TERMINAL_COLUMNS if "p_cancellation" in weekly else {})
    shown = weekly[list(columns)].rename(columns=columns).copy()
    if "p_cancellation" in weekly:
        shown["P(cancel)"] = shown["P(cancel)"].map(lambda p: f"{p:.0%}")
        shown["cancelled"] = shown["cancelled"].map(lambda v: f"{v:.1f}")
    for column in ("P(no bed)", "P(short staff)"):
        shown[column] = shown[column].map(lambda p: f"{p:.0%}")
    for column in ("affected", "wait h", "short shifts", "beds"):
        shown[column] = shown[column].map(lambda v: f"{v:.1f}")
    for column in ("peak p50", "peak p90"):
        shown[column] = shown[column].map(lambda v: f"{v:.0f}")
    return shown.to_string(index=False)


def page_table(weekly: pd.DataFrame) -> pd.DataFrame:
    """The weekly table with readable headers and standard errors beside the values."""

    def with_se(column: str) -> pd.Series:
        return (
            weekly[column].map("{:.1%}".format)
            + " ± "
            + weekly[f"{column}_se"].map("{:.1%}".format)
        )

    table = pd.DataFrame(
        {
            "week from": weekly["week_start"],
            "P(no free bed at some moment)": with_se("p_bed_shortfall"),
            "patients finding no free bed": weekly["expected_patients_affected"].map(
                "{:.1f}".format
            ),
            "hours waited": weekly["expected_wait_hours"].map("{:.0f}".format),
            "peak census, median / 90%": weekly["peak_census_p50"].map("{:.0f}".format)
            + " / "
            + weekly["peak_census_p90"].map("{:.0f}".format),
            "beds open": weekly["beds_open"].map("{:.1f}".format),
            "P(a shift short of nurses)": with_se("p_staff_shortfall"),
            "short shifts": weekly["expected_short_shifts"].map("{:.1f}".format),
        }
    )
    if "p_cancellation" in weekly:
        table["planned patients admitted"] = weekly["expected_planned_admitted"].map(
            "{:.1f}".format
        )
        table["planned patients cancelled"] = weekly["expected_cancelled"].map("{:.1f}".format)
        table["P(at least one cancellation)"] = with_se("p_cancellation")
    return table


def headline(run: RunResult) -> str:
    """One sentence: the chance of at least one bed shortfall in the first weeks; then, when
    the scenario asks for a target, the beds it needs (:func:`sizing_report.sentence`)."""
    outlook = run.summary.outlook
    sized = "" if run.sizing is None else " " + sizing_report.sentence(run.sizing)
    return (
        f"Chance of at least one moment with no free bed in the next {outlook.weeks} weeks: "
        f"{outlook.p_bed_shortfall:.0%} (Monte Carlo standard error "
        f"{outlook.p_bed_shortfall_se:.1%}); on average "
        f"{outlook.expected_patients_affected:.1f} patients would find no free bed in that time."
        + sized
    )


def _ward_plan(scenario) -> list[tuple[str, str]]:
    ward = scenario.ward
    changes = (
        "; ".join(f"{c.change:+d} beds {c.start} to {c.end}" for c in ward.bed_changes) or "none"
    )
    shifts = "; ".join(
        f"{s.name} {s.start_hour:05.2f}-{s.end_hour:05.2f} h, 1 nurse per "
        f"{s.patients_per_nurse:g} patients, rostered Mon-Sun {list(s.roster)}"
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
            f"{run.paths} paths",
        ),
        *_level_changes(summary),
        ("Drift check", summary.drift.message() if summary.drift else NO_DRIFT),
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


def _hours(run: RunResult):
    """The discharge hour profile (7, 24) of calendar timing, else None."""
    return None if run.model.discharges is None else run.model.discharges.hour_profile


def write_run_files(run: RunResult, folder: Path, hindcast: HindcastQuote | None = None) -> None:
    """All files of ``planner run`` into ``folder``; ``hindcast`` as for :func:`assumptions`."""
    weekly, daily, shifts = run.summary.weekly, run.summary.daily, run.summary.shifts
    forecast = run.forecast.table()
    write_csv(weekly, folder / "weekly.csv")
    write_csv(daily, folder / "daily.csv")
    write_csv(shifts, folder / "shifts.csv")
    write_csv(forecast, folder / "forecast.csv")
    pictures = {
        "admissions.png": charts.admissions_fan(run.history.admissions, forecast),
        "census.png": charts.census_fan(daily, run.summary.recent_census),
        "shortfall.png": charts.shortfall_probabilities(weekly),
        "nurses.png": charts.nurses_against_roster(shifts),
        "discharges.png": charts.discharge_pattern(daily, _hours(run)),
    }
    if run.sizing is not None:
        write_csv(run.sizing.table, folder / "sizing.csv")
        write_csv(run.sizing.roster, folder / "roster.csv")
        pictures["sizing.png"] = sizing_report.sizing_picture(run.sizing)
    for name, png in pictures.items():
        (folder / name).write_bytes(png)
    (folder / "report.html").write_text(run_page(run, pictures, hindcast))
    inputs = [p for p in (run.scenario.admissions_file, run.scenario.episodes_file) if p]
    summary = run.forecast.summary
    extra = {
        "start": run.history.start.date(),
        "horizon_days": run.scenario.horizon_days,
        "forecast": {
            "strategy": summary.strategy,
            "order": summary.order,
            "criterion": summary.criterion,
        },
        "timings_s": {k: round(v, 3) for k, v in run.timings.items()},
    }
    record = run_record(
        "run", run.scenario.source, run.scenario.resolved, inputs, run.seed, run.paths, extra
    )
    write_json(record, folder / "run.json")


def _sizing_sections(run: RunResult, pictures: dict[str, bytes]) -> list[tuple[str, str]]:
    """The beds and nurses the scenario's [sizing] target needs, when it gives one."""
    if run.sizing is None:
        return []
    body = (
        f"<p>{html.escape(sizing_report.sentence(run.sizing))}</p>"
        + html.image(pictures["sizing.png"], "risk against beds")
        + html.table(sizing_report.week_view(run.sizing))
        + f"<p>Nurses needed with {run.sizing.roster_beds} beds (roster.csv):</p>"
        + html.table(sizing_report.roster_view(run.sizing.roster))
    )
    return [("What the ward needs", body)]


def run_page(
    run: RunResult, pictures: dict[str, bytes], hindcast: HindcastQuote | None = None
) -> str:
    """The self-contained report page."""
    scenario = run.scenario
    last = run.history.start + pd.Timedelta(days=scenario.horizon_days - 1)
    subtitle = (
        f"{scenario.description} Forecast {run.history.start.date()} to {last.date()}, "
        f"{run.paths} sample paths, seed {run.seed}."
    )
    sections = [
        ("", f'<p class="headline">{html.escape(headline(run))}</p>'),
        ("Week by week", html.table(page_table(run.summary.weekly)) + WEEKLY_NOTE),
        ("Chance of running short", html.image(pictures["shortfall.png"], "weekly shortfall")),
        ("Census against beds", html.image(pictures["census.png"], "census fan chart")),
        ("Admissions", html.image(pictures["admissions.png"], "admissions fan chart")),
        ("Nurses", html.image(pictures["nurses.png"], "nurses required against rostered")),
        ("Discharges", html.image(pictures["discharges.png"], "discharges by weekday and hour")),
        *_sizing_sections(run, pictures),
        ("Key assumptions", html.facts(assumptions(run, hindcast))),
    ]
    return html.page(f"Ward plan: {scenario.name}", sections, subtitle)

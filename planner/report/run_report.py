"""The run report: files, charts and the page written by ``planner run``."""

from __future__ import annotations

from pathlib import Path

import pandas as pd

from planner.report import charts, first_screen, html, sizing_report
from planner.report.assumptions import assumptions
from planner.report.files import run_record, write_csv, write_json
from planner.report.workbook import write_workbook
from planner.results import HindcastQuote, RunResult

WEEKLY_NOTE = (
    "<p>Chances are shares of the simulated paths, shown with ± 1 Monte Carlo standard error "
    "(1 SE, across the independent paths); counts and hours are means over paths. Patients "
    "finding no free bed waited for one or were placed elsewhere. Hours waited are those of "
    "all the week's arriving patients added together, counted in the week they arrived; a "
    "wait still running at the end of the forecast is counted up to its end only, so the last "
    "weeks understate. All columns are in weekly.csv.</p>"
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
    """The weekly table with headers that say their unit and period, standard errors beside
    the chances."""

    def with_se(column: str) -> pd.Series:
        return (
            weekly[column].map("{:.1%}".format)
            + " ± "
            + weekly[f"{column}_se"].map("{:.1%}".format)
        )

    table = pd.DataFrame(
        {
            "week from": weekly["week_start"].map(first_screen.day),
            "chance of no free bed at some moment (% of paths, ± 1 SE)": with_se("p_bed_shortfall"),
            "patients finding no free bed (mean per week)": weekly[
                "expected_patients_affected"
            ].map("{:.1f}".format),
            "hours waited for a bed (all patients together, per week)": weekly[
                "expected_wait_hours"
            ].map("{:,.0f}".format),
            "highest occupied beds in the week (median / 90% of paths)": weekly[
                "peak_census_p50"
            ].map("{:.0f}".format)
            + " / "
            + weekly["peak_census_p90"].map("{:.0f}".format),
            "beds open (mean over the week)": weekly["beds_open"].map("{:.1f}".format),
            "chance of a shift short of nurses (% of paths, ± 1 SE)": with_se("p_staff_shortfall"),
            "short shifts (mean per week)": weekly["expected_short_shifts"].map("{:.1f}".format),
        }
    )
    if "p_cancellation" in weekly:
        table["planned patients admitted (mean per week)"] = weekly[
            "expected_planned_admitted"
        ].map("{:.1f}".format)
        table["planned patients cancelled (mean per week)"] = weekly["expected_cancelled"].map(
            "{:.1f}".format
        )
        table["chance of at least one cancellation (% of paths, ± 1 SE)"] = with_se(
            "p_cancellation"
        )
    return table


def headline(run: RunResult) -> str:
    """One sentence: the chance of at least one bed shortfall in the first weeks; then, when
    the scenario asks for a target, the beds it needs (:func:`sizing_report.sentence`)."""
    outlook = run.summary.outlook
    sized = "" if run.sizing is None else " " + sizing_report.sentence(run.sizing)
    return (
        f"Chance of at least one moment with no free bed in the next {outlook.weeks} weeks: "
        f"{outlook.p_bed_shortfall:.0%} (95% interval "
        f"{first_screen.band(outlook.p_bed_shortfall, outlook.p_bed_shortfall_se)}); on "
        f"average {outlook.expected_patients_affected:.1f} patients in all would find no free "
        f"bed in that time." + sized
    )


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
    if run.summary.shift_weekdays is not None:
        write_csv(run.summary.shift_weekdays, folder / "shift_weekdays.csv")
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
    write_workbook(workbook_sheets(run), folder / "run.xlsx")
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


def workbook_sheets(run: RunResult) -> dict[str, tuple[pd.DataFrame, str, str]]:
    """The sheets of run.xlsx: the CSV tables of the run."""
    summary = run.summary
    sheets = {
        "weekly": (summary.weekly, "in the week", "weekly.csv: one row per forecast week"),
        "daily": (summary.daily, "on the day", "daily.csv: one row per forecast day"),
        "shifts": (summary.shifts, "per shift", "shifts.csv: one row per day and shift"),
    }
    if summary.shift_weekdays is not None:
        holds = "shift_weekdays.csv: one row per shift and weekday"
        sheets["shift_weekdays"] = (summary.shift_weekdays, "per shift", holds)
    if run.sizing is not None:
        sheets["sizing"] = (run.sizing.table, "in the week", "sizing.csv: the beds each week needs")
        sheets["roster"] = (run.sizing.roster, "per shift", "roster.csv: nurses needed")
    return sheets


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
        ("", first_screen.answer(run)),
        ("Chance of running short", html.image(pictures["shortfall.png"], "weekly shortfall")),
        *first_screen.shift_sections(run),
        *_sizing_sections(run, pictures),
        ("Week by week", html.table(page_table(run.summary.weekly)) + WEEKLY_NOTE),
        ("Occupancy against beds", html.image(pictures["census.png"], "census fan chart")),
        ("Admissions", html.image(pictures["admissions.png"], "admissions fan chart")),
        ("Nurses", html.image(pictures["nurses.png"], "nurses required against rostered")),
        ("Discharges", html.image(pictures["discharges.png"], "discharges by weekday and hour")),
        ("Key assumptions", html.facts(assumptions(run, hindcast))),
    ]
    return html.page(f"Ward plan: {scenario.name}", sections, subtitle)

"""The sizing files and page written by ``planner size``, and the sentence ``planner run``
quotes in its headline."""

from __future__ import annotations

from pathlib import Path

import pandas as pd

from planner.report import html, plan_charts
from planner.report.files import run_record, write_csv, write_json
from planner.report.workbook import write_workbook
from planner.results import SizingResult
from planner.summaries.sizing import MEASURE_WORDS

METHOD = (
    "<p>Every bed count is simulated on the same forecast paths with the same patients "
    "(arrival times and stays), so the counts differ only by their beds; on the same patients "
    "nobody is worse off with more beds, so the risk never rises with beds and a bisection "
    "finds the fewest beds that trying every count would. Risks are estimated from the "
    "simulated paths with their Monte Carlo standard error: for the weekly chance, a share of "
    "paths; for the share of patients, all paths' patients pooled, with the error of a ratio "
    "across the independent paths; for hours, a mean over paths. The classical sizes assume "
    "steady Poisson arrivals at the horizon's mean forecast rate and the fitted mean stay: "
    "beds for 85% mean occupancy, and the fewest beds whose Erlang loss formula turns away "
    "at most the target share of patients. Dated bed changes of the scenario are kept on top "
    "of the base beds sized here. All columns are in sizing.csv, every count tried in "
    "sizing_candidates.csv and the roster in roster.csv.</p>"
)


def why_they_differ(result: SizingResult) -> str:
    """Why the simulated answer and the classical sizes differ, with this ward's numbers."""
    weeks = result.table.iloc[:-1]
    busiest = weeks.loc[weeks["offered_load"].idxmax()]
    return (
        f"<p>The classical sizes take one steady arrival rate, the horizon's mean "
        f"({result.classical.admissions_per_day:.2f} admissions a day, a load of "
        f"{result.classical.load:.1f} occupied beds with unlimited beds), and ask about the "
        f"average moment. The simulated answer asks every week to meet the target: it sees "
        f"the busiest week (a mean load of {busiest['offered_load']:.1f} in the week from "
        f"{busiest['week_start']}), weekday and hour-of-day peaks, the spread of the forecast "
        f"(paths with more admissions than the mean), the patients on the ward now and the "
        f"stays as recorded. A chance that anyone in a week finds no free bed is also far "
        f"stricter than a share of patients: one busy afternoon is enough."
        + (
            " Patients who find no free bed here wait for one, so they still add to the load "
            "that the loss formula drops."
            if result.scenario.ward.policy == "wait"
            else ""
        )
        + "</p>"
    )


def _risk_text(result: SizingResult, value: float) -> str:
    return f"{value:.1%}" if result.target.is_share else f"{value:.1f} hours"


def sentence(result: SizingResult) -> str:
    """One sentence: the beds needed for the target in every week, beside the classical
    sizes; says when the answer is within one standard error of the target."""
    target = result.target
    overall = result.table.iloc[-1]
    what = MEASURE_WORDS[target.measure]["phrase"]
    erlang = "an Erlang loss rule" if target.is_share else (
        f"an Erlang loss rule at {target.erlang_share:.0%} of patients")  # fmt: skip
    text = (
        f"To keep {what} at or under {target.target_text()} in every week, this ward needs "
        f"{result.beds_needed} beds (now {result.current_beds}); an 85% occupancy rule says "
        f"{result.classical.occupancy_beds}, {erlang} {result.classical.erlang_beds}."
    )
    if result.near_target:
        text += (
            f" With {result.beds_needed} beds the worst week's estimate is "
            f"{_risk_text(result, overall['risk'])} (standard error "
            f"{_risk_text(result, overall['risk_se'])}), within one standard error of the "
            f"target or of missing it with one bed fewer: another seed could move the answer "
            f"by one bed."
        )
    return text


def week_view(result: SizingResult) -> pd.DataFrame:
    """The per-week rows of sizing.csv with headers that say their unit and period."""
    rows = result.table.iloc[:-1]
    spec = ".1%" if result.target.is_share else ".1f"
    unit = f"{MEASURE_WORDS[result.target.measure]['unit']}, ± 1 SE"

    def pm(column: str) -> pd.Series:
        return rows[column].map(lambda v: format(v, spec)) + " ± " + rows[f"{column}_se"].map(
            lambda v: format(v, spec))  # fmt: skip

    return pd.DataFrame(
        {
            "week from": rows["week_start"],
            "beds needed (base beds)": rows["beds_needed"],
            f"risk with them ({unit})": pm("risk"),
            f"risk with one bed fewer ({unit})": pm("risk_one_fewer"),
            f"risk with {result.current_beds} beds, now ({unit})": pm("risk_now"),
            "85% occupancy rule (beds)": rows["occupancy_85_beds"],
            "Erlang loss rule (beds)": rows["erlang_beds"],
        }
    )


def roster_view(roster: pd.DataFrame) -> pd.DataFrame:
    """roster.csv as a page table: one row per shift and weekday."""
    worst = "% of paths, the worst such day"
    return pd.DataFrame(
        {
            "shift": roster["shift"],
            "weekday": roster["weekday"],
            "nurses rostered now (per shift)": roster["nurses_rostered"],
            f"chance short now ({worst})": roster["p_short_rostered"].map("{:.1%}".format),
            "nurses needed (per shift)": roster["nurses_needed"],
            f"chance short with them ({worst})": roster["p_short_needed"].map("{:.1%}".format),
        }
    )


def sizing_picture(result: SizingResult) -> bytes:
    marks = {
        "needed": result.beds_needed,
        "now": result.current_beds,
        "85% occupancy": result.classical.occupancy_beds,
        "Erlang loss": result.classical.erlang_beds,
    }
    return plan_charts.risk_against_beds(
        result.candidates, result.target.target, marks, MEASURE_WORDS[result.target.measure]["axis"]
    )


def sizing_page(result: SizingResult, picture: bytes) -> str:
    """The self-contained sizing page."""
    target = result.target
    defaults = f" By default: {target.defaults_text()}." if target.defaults else ""
    subtitle = (
        f"Target: {target.describe()} in every forecast week from {result.start.date()}; "
        f"{result.paths} sample paths, seed {result.seed}.{defaults}"
    )
    roster_note = (
        f"<p>Registered nurses per shift and weekday keeping the chance of a short shift at or "
        f"under {target.shift_target:.0%} on every such day, with {result.roster_beds} beds "
        f"(more beds admit more patients, who need more nurses); never fewer than the minimum "
        f"nurses per shift.</p>"
    )
    sections = [
        ("", f'<p class="headline">{html.escape(sentence(result))}</p>'),
        ("Risk against beds", html.image(picture, "risk against beds")),
        ("Beds each week needs", html.table(week_view(result)) + METHOD),
        ("Why the answers differ", why_they_differ(result)),
        ("Nurses", roster_note + html.table(roster_view(result.roster))),
    ]
    return html.page(f"Ward size: {result.scenario.name}", sections, subtitle)


def write_sizing_files(result: SizingResult, folder: Path) -> None:
    """sizing.csv, sizing_candidates.csv, roster.csv, sizing.png, sizing.html, run.json."""
    write_csv(result.table, folder / "sizing.csv")
    write_csv(result.candidates, folder / "sizing_candidates.csv")
    write_csv(result.roster, folder / "roster.csv")
    sheets = {
        "sizing": (result.table, "in the week", "sizing.csv: the beds each week needs"),
        "roster": (result.roster, "per shift", "roster.csv: nurses needed per shift and weekday"),
        "candidates": (result.candidates, "in the week", "sizing_candidates.csv: every count"),
    }
    write_workbook(sheets, folder / "sizing.xlsx")
    picture = sizing_picture(result)
    (folder / "sizing.png").write_bytes(picture)
    (folder / "sizing.html").write_text(sizing_page(result, picture))
    scenario = result.scenario
    inputs = [p for p in (scenario.admissions_file, scenario.episodes_file) if p]
    target = result.target
    extra = {
        "start": result.start.date(),
        "sizing": {"measure": target.measure, "target": target.target,
                   "shift_target": target.shift_target, "beds_needed": result.beds_needed},
    }  # fmt: skip
    record = run_record("size", scenario.source, scenario.resolved, inputs, result.seed,
                        result.paths, extra)  # fmt: skip
    write_json(record, folder / "run.json")

"""The comparison files and page written by ``planner compare``."""

from __future__ import annotations

from pathlib import Path

import pandas as pd

from planner.report import charts, html
from planner.report.files import run_record, write_csv, write_json
from planner.results import Comparison


def write_compare_files(comparison: Comparison, folder: Path) -> None:
    """comparison.csv, costs.csv (when costs are given), comparison.png, comparison.html,
    run.json."""
    write_csv(comparison.table, folder / "comparison.csv")
    if comparison.costs is not None:
        write_csv(comparison.costs, folder / "costs.csv", float_format="%.2f")
    picture = charts.comparison_chart(comparison.table)
    (folder / "comparison.png").write_bytes(picture)
    (folder / "comparison.html").write_text(compare_page(comparison, picture))
    first = comparison.runs[0]
    inputs = sorted(
        {
            p
            for run in comparison.runs
            for p in (run.scenario.admissions_file, run.scenario.episodes_file)
            if p
        }
    )
    extra = {
        "scenarios": {str(run.scenario.source): run.scenario.resolved for run in comparison.runs},
        "start": first.history.start.date(),
        "horizon_days": first.scenario.horizon_days,
    }
    record = run_record(
        "compare",
        first.scenario.source,
        first.scenario.resolved,
        inputs,
        first.seed,
        first.paths,
        extra,
    )
    write_json(record, folder / "run.json")


def _pm(values: pd.Series, errors: pd.Series, spec: str) -> pd.Series:
    """ "value ± se" text."""
    return values.map(lambda v: format(v, spec)) + " ± " + errors.map(lambda v: format(v, spec))


def glance_view(summary: pd.DataFrame) -> pd.DataFrame:
    weeks = next(c for c in summary.columns if c.startswith("p_bed_shortfall_first_"))
    label = weeks.removeprefix("p_bed_shortfall_first_").replace("_", " ")
    return pd.DataFrame(
        {
            "plan": summary["scenario"],
            f"P(no free bed in the first {label})": _pm(summary[weeks], summary["se"], ".1%"),
            "P(no free bed, any week)": summary["p_bed_shortfall_any_week"].map("{:.1%}".format),
            "patients finding no free bed": summary["expected_patients_affected"].map(
                "{:.1f}".format
            ),
            "change against the first plan": _pm(
                summary["change_vs_first"], summary["change_se"], "+.1f"
            ),
            "P(a shift short, any week)": summary["p_staff_shortfall_any_week"].map(
                "{:.1%}".format
            ),
            "short shifts": summary["expected_short_shifts"].map("{:.1f}".format),
        }
    )


def cost_view(costs: pd.DataFrame) -> pd.DataFrame:
    money = "{:,.0f}".format
    return pd.DataFrame(
        {
            "plan": costs["scenario"],
            "plan cost": costs["plan_cost"].map(money),
            "cost of patients affected": costs["affected_patients_cost"].map(money),
            "total": costs["total_cost"].map(money),
            "patients finding no free bed": costs["expected_shortfalls"].map("{:.1f}".format),
            "avoided against the first": _pm(
                costs["shortfalls_avoided"], costs["shortfalls_avoided_se"], ".1f"
            ),
            "extra plan cost": costs["incremental_plan_cost"].map(money),
            "extra cost per shortfall avoided": costs["incremental_cost_per_shortfall_avoided"].map(
                lambda v: "" if pd.isna(v) else money(v)
            ),
        }
    )


def weekly_view(table: pd.DataFrame) -> pd.DataFrame:
    percent = "{:.1%}".format
    return pd.DataFrame(
        {
            "plan": table["scenario"],
            "week from": table["week_start"],
            "P(no free bed)": table["p_bed_shortfall"].map(percent),
            "change ± paired se": _pm(
                table["diff_p_bed_shortfall"], table["diff_p_bed_shortfall_se"], "+.1%"
            ),
            "se if run independently": table["diff_p_bed_shortfall_se_independent"].map(percent),
            "P(a shift short)": table["p_staff_shortfall"].map(percent),
            "change": table["diff_p_staff_shortfall"].map("{:+.1%}".format),
            "patients finding no free bed": table["expected_patients_affected"].map(
                "{:.2f}".format
            ),
        }
    )


def compare_page(comparison: Comparison, picture: bytes) -> str:
    first = comparison.runs[0]
    sections = [
        (
            "Plans at a glance",
            html.table(glance_view(comparison.glance))
            + "<p>Every plan saw the same forecast admissions and the same stays path by path "
            "(common random numbers), so the changes against the first plan are paired; "
            "their standard errors are those of the paired differences. Counts are means "
            "over paths for the whole horizon.</p>",
        ),
        ("Chance of running short, by week", html.image(picture, "shortfall by plan")),
    ]
    if comparison.costs is not None:
        sections.append(
            (
                "Costs over the horizon",
                html.table(cost_view(comparison.costs))
                + "<p>A shortfall is one patient who found no free bed (waited or was "
                "placed elsewhere). All figures are in costs.csv.</p>",
            )
        )
    sections.append(("Week by week", html.table(weekly_view(comparison.table))))
    subtitle = (
        f"{len(comparison.runs)} plans, {first.paths} paths each, seed {first.seed}, "
        f"{first.scenario.horizon_weeks} weeks from {first.history.start.date()}; the first "
        f"plan ({first.scenario.name}) is the reference."
    )
    return html.page("Comparing ward plans", sections, subtitle)

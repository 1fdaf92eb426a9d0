"""The comparison files and page written by ``planner compare``."""

from __future__ import annotations

from pathlib import Path

import pandas as pd

from planner.report import charts, html
from planner.report.files import run_record, write_csv, write_json
from planner.report.run_report import HEADLINE_WEEKS
from planner.report.weekly import any_shortfall


def summary_table(comparison) -> pd.DataFrame:
    """One row per scenario: chance of any bed shortfall in the first weeks and over the
    horizon, and expected patients affected over the horizon, with the paired difference."""
    base = comparison.runs[0].weekly
    rows = []
    for run in comparison.runs:
        weekly = run.weekly
        weeks = min(HEADLINE_WEEKS, weekly.bed_shortfall.shape[1])
        early, early_se = any_shortfall(weekly, weeks)
        whole, _ = any_shortfall(weekly, weekly.bed_shortfall.shape[1])
        affected = weekly.patients_affected.sum(axis=1)
        change = affected - base.patients_affected.sum(axis=1)
        rows.append(
            {
                "scenario": run.scenario.name,
                f"p_bed_shortfall_first_{weeks}_weeks": early,
                "se": early_se,
                "p_bed_shortfall_any_week": whole,
                "expected_patients_affected": affected.mean(),
                "change_vs_first": change.mean(),
                "change_se": change.std(ddof=1) / len(change) ** 0.5 if len(change) > 1 else 0.0,
                "p_staff_shortfall_any_week": weekly.staff_shortfall.any(axis=1).mean(),
                "expected_short_shifts": weekly.short_shifts.sum(axis=1).mean(),
            }
        )
    return pd.DataFrame(rows)


def write_compare_files(comparison, folder: Path) -> None:
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


def compare_page(comparison, picture: bytes) -> str:
    first = comparison.runs[0]
    summary = summary_table(comparison)
    percent = {c: ".1%" for c in summary.columns if c.startswith("p_") or c == "se"}
    numbers = {
        "expected_patients_affected": ".1f",
        "change_vs_first": "+.1f",
        "change_se": ".2f",
        "expected_short_shifts": ".1f",
    }
    weekly = comparison.table[
        [
            "scenario",
            "week_start",
            "p_bed_shortfall",
            "diff_p_bed_shortfall",
            "diff_p_bed_shortfall_se",
            "diff_p_bed_shortfall_se_independent",
            "p_staff_shortfall",
            "diff_p_staff_shortfall",
            "expected_patients_affected",
        ]
    ]
    weekly_formats = {c: ".1%" for c in weekly.columns if c.startswith(("p_", "diff_p"))}
    weekly_formats["expected_patients_affected"] = ".2f"
    sections = [
        (
            "Plans at a glance",
            html.table(summary, percent | numbers)
            + "<p>Every plan saw the same forecast admissions and the same stays path by path "
            "(common random numbers), so the changes against the first plan are paired; "
            "their standard errors are those of the paired differences.</p>",
        ),
        ("Bed shortfall by week", html.image(picture, "bed shortfall by scenario")),
    ]
    if comparison.costs is not None:
        costs = comparison.costs
        formats = {c: ",.0f" for c in costs.columns if c != "scenario"}
        formats |= {
            "expected_shortfalls": ".1f",
            "shortfalls_avoided": ".1f",
            "shortfalls_avoided_se": ".2f",
        }
        sections.append(("Costs over the horizon", html.table(costs, formats)))
    sections.append(("Week by week", html.table(weekly, weekly_formats)))
    subtitle = (
        f"{len(comparison.runs)} plans, {first.paths} paths each, seed {first.seed}, "
        f"{first.scenario.horizon_weeks} weeks from {first.history.start.date()}; the first "
        f"plan ({first.scenario.name}) is the reference."
    )
    return html.page("Comparing ward plans", sections, subtitle)

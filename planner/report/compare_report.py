"""The comparison files and page written by ``planner compare``."""

from __future__ import annotations

from pathlib import Path

import pandas as pd

from planner.report import html, plan_charts
from planner.report.files import run_record, write_csv, write_json
from planner.report.workbook import write_workbook
from planner.results import Comparison


def write_compare_files(comparison: Comparison, folder: Path) -> None:
    """comparison.csv, costs.csv (when costs are given), comparison.png, comparison.html,
    run.json."""
    write_csv(comparison.table, folder / "comparison.csv")
    if comparison.costs is not None:
        write_csv(comparison.costs, folder / "costs.csv", float_format="%.2f")
    sheets = {"comparison": (comparison.table, "in the week", "comparison.csv: per plan and week")}
    if comparison.costs is not None:
        sheets["costs"] = (comparison.costs, "total over the horizon", "costs.csv: per plan")
    write_workbook(sheets, folder / "comparison.xlsx")
    picture = plan_charts.comparison_chart(comparison.table)
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
        "pairing": "paired" if comparison.paired else "independent",
        "seeds": {str(run.scenario.source): run.seed for run in comparison.runs},
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
    """ "value ± error" text; a sign, when ``spec`` asks for one, on the value only."""
    plain = spec.replace("+", "")
    return values.map(lambda v: format(v, spec)) + " ± " + errors.map(lambda v: format(v, plain))


def _against(first: pd.Series, text: pd.Series) -> pd.Series:
    """``text`` with "reference" in the rows of the first plan (``first`` True)."""
    return text.where(~first, "reference")


def _points(values: pd.Series, errors: pd.Series) -> pd.Series:
    """A change of a share as "+3.2 ± 1.1" percentage points."""
    return _pm(100 * values, 100 * errors, "+.1f")


def _se_name(paired: bool) -> str:
    return "± 1 paired SE" if paired else "± 1 SE, independent runs"


def glance_view(summary: pd.DataFrame, weeks: int, paired: bool = True) -> pd.DataFrame:
    """The glance table with headers that say their unit and period."""
    first = next(c for c in summary.columns if c.startswith("p_bed_shortfall_first_"))
    label = first.removeprefix("p_bed_shortfall_first_").replace("_", " ")
    total = f"total over the {weeks} weeks, mean over paths"
    percent = "{:.1%}".format
    reference = summary["scenario"] == summary["scenario"].iloc[0]
    return pd.DataFrame(
        {
            "plan": summary["scenario"],
            f"chance of no free bed in the first {label} (% of paths, ± 1 SE)": _pm(
                summary[first], summary["se"], ".1%"
            ),
            f"chance of no free bed in any of the {weeks} weeks (% of paths)": summary[
                "p_bed_shortfall_any_week"
            ].map(percent),
            f"patients finding no free bed ({total})": summary["expected_patients_affected"].map(
                "{:.1f}".format
            ),
            f"change against the first plan (patients, total, {_se_name(paired)})": _against(
                reference, _pm(summary["change_vs_first"], summary["change_se"], "+.1f")
            ),
            f"chance of a shift short of nurses in any of the {weeks} weeks (% of paths)": summary[
                "p_staff_shortfall_any_week"
            ].map(percent),
            f"short shifts ({total})": summary["expected_short_shifts"].map("{:.1f}".format),
            f"change against the first plan (short shifts, total, {_se_name(paired)})": _against(
                reference,
                _pm(
                    summary["short_shifts_change_vs_first"],
                    summary["short_shifts_change_se"],
                    "+.1f",
                ),
            ),
        }
    )


def cost_view(costs: pd.DataFrame, paired: bool = True) -> pd.DataFrame:
    """costs.csv with headers that say their unit (the currency of [costs]) and period."""
    money = "{:,.0f}".format

    def per(column: str) -> pd.Series:
        return costs[column].map(lambda v: "" if pd.isna(v) else money(v))

    se = _se_name(paired)
    reference = costs["scenario"] == costs["scenario"].iloc[0]
    return pd.DataFrame(
        {
            "plan": costs["scenario"],
            "beds and rostered nurses (cost, total)": costs["plan_cost"].map(money),
            "patients diverted or waiting (cost, total)": costs["affected_patients_cost"].map(
                money
            ),
            "short shifts (cost, total)": costs["short_shifts_cost"].map(money),
            "all (cost, total)": costs["total_cost"].map(money),
            f"patients finding no free bed avoided against the first (total, {se})": _against(
                reference,
                _pm(costs["shortfalls_avoided"], costs["shortfalls_avoided_se"], "+.1f"),
            ),
            f"short shifts avoided against the first (total, {se})": _against(
                reference,
                _pm(costs["short_shifts_avoided"], costs["short_shifts_avoided_se"], "+.1f"),
            ),
            "extra cost of beds and nurses against the first (cost, total)": costs[
                "incremental_plan_cost"
            ].map(money),
            "extra cost per patient avoided (cost per patient)": per(
                "incremental_cost_per_shortfall_avoided"
            ),
            "extra cost per short shift avoided (cost per shift)": per(
                "incremental_cost_per_short_shift_avoided"
            ),
        }
    )


def weekly_view(table: pd.DataFrame, paired: bool = True) -> pd.DataFrame:
    """comparison.csv with headers that say their unit and period; changes of chances in
    percentage points."""
    percent = "{:.1%}".format
    se = _se_name(paired)
    reference = table["scenario"] == table["scenario"].iloc[0]
    return pd.DataFrame(
        {
            "plan": table["scenario"],
            "week from": table["week_start"].map(lambda d: pd.Timestamp(d).strftime("%d %b %Y")),
            "chance of no free bed (% of paths, in the week)": table["p_bed_shortfall"].map(
                percent
            ),
            f"change against the first plan (percentage points, {se})": _against(
                reference, _points(table["diff_p_bed_shortfall"], table["diff_p_bed_shortfall_se"])
            ),
            "chance of a shift short of nurses (% of paths, in the week)": table[
                "p_staff_shortfall"
            ].map(percent),
            f"change against the first (percentage points, {se})": _against(
                reference,
                _points(table["diff_p_staff_shortfall"], table["diff_p_staff_shortfall_se"]),
            ),
            "patients finding no free bed (mean per week)": table["expected_patients_affected"].map(
                "{:.2f}".format
            ),
            "short shifts (mean per week)": table["expected_short_shifts"].map("{:.2f}".format),
        }
    )


def _pairing_note(comparison: Comparison) -> str:
    """What the standard errors of the changes are, and why."""
    if not comparison.paired:
        names = ", ".join(str(run.scenario.source) for run in comparison.runs)
        return (
            f"<p><strong>Compared as independent runs</strong> (--independent): these plans "
            f"({html.escape(names)}) do not all share their history and forecast, so each was "
            f"run on its own simulated patients with its own seed. Every change is between two "
            f"independent estimates and its standard error is sqrt(SE<sub>a</sub><sup>2</sup> "
            f"+ SE<sub>b</sub><sup>2</sup>), wider than a paired comparison's.</p>"
        )
    table = comparison.table[comparison.table["scenario"] != comparison.runs[0].scenario.name]
    paired = table["diff_p_bed_shortfall_se"].mean()
    separate = table["diff_p_bed_shortfall_se_independent"].mean()
    gain = (
        f" Pairing makes the weekly changes more precise than two separate runs would: a "
        f"standard error of {100 * paired:.1f} percentage points on average instead of "
        f"{100 * separate:.1f}."
        if paired > 0 and len(table)
        else ""
    )
    return (
        "<p>Every plan was run on the same simulated patients: the same forecast admissions "
        "(scaled by a plan's own demand changes) and the same random numbers for arrival "
        "times and stays, path by path. The changes against the first plan are therefore "
        "paired: each is the mean over paths of the path-by-path difference, with the "
        f"standard error of those differences across paths (1 paired SE).{gain}</p>"
    )


def compare_page(comparison: Comparison, picture: bytes) -> str:
    first = comparison.runs[0]
    weeks = first.scenario.horizon_weeks
    paired = comparison.paired
    sections = [
        (
            "Plans at a glance",
            html.table(glance_view(comparison.glance, weeks, paired))
            + _pairing_note(comparison)
            + "<p>Counts are means over paths, added up over the whole horizon.</p>",
        ),
        ("Chance of running short, by week", html.image(picture, "shortfall by plan")),
    ]
    if comparison.costs is not None:
        sections.append(
            (
                "Costs over the horizon",
                html.table(cost_view(comparison.costs, paired))
                + "<p>Costs are in the currency of the scenarios' [costs], totals over the "
                f"{weeks} weeks: beds open per day and rostered nurse shifts (the plan), "
                "patients diverted and hours waited, and shifts short of nurses (for "
                "instance agency cover). A patient avoided is one fewer patient finding no "
                "free bed (waiting or placed elsewhere). All figures are in costs.csv.</p>",
            )
        )
    sections.append(("Week by week", html.table(weekly_view(comparison.table, paired))))
    how = "common random numbers" if paired else "independent runs, each with its own seed"
    subtitle = (
        f"{len(comparison.runs)} plans, {first.paths} paths each, {how}, seed {first.seed}, "
        f"{weeks} weeks from {first.history.start.date()}; the first plan "
        f"({first.scenario.name}) is the reference."
    )
    return html.page("Comparing ward plans", sections, subtitle)

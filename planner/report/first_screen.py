"""The first screen of the run report: will the ward run short, when, how badly, and what
would fix it, in plain words; and the tables by shift and weekday.

Every chance is a share of the simulated paths; its band is the 95% interval of the Monte
Carlo estimate, the share plus or minus 1.96 standard errors (cut at 0% and 100%).
"""

from __future__ import annotations

import pandas as pd

from planner.report import html, sizing_report
from planner.results import RunResult

#: Weeks named as the worst on the first screen.
WORST_WEEKS = 3
#: 95% interval of a Monte Carlo estimate: plus or minus this many standard errors.
Z95 = 1.96
SHORT_WEEKDAYS = {"Monday": "Mon", "Tuesday": "Tue", "Wednesday": "Wed", "Thursday": "Thu",
                  "Friday": "Fri", "Saturday": "Sat", "Sunday": "Sun"}  # fmt: skip


def band(share: float, se: float) -> str:
    """ "67% to 73%": the 95% interval of a share of paths."""
    low, high = max(share - Z95 * se, 0.0), min(share + Z95 * se, 1.0)
    return f"{low:.0%} to {high:.0%}"


def day(text: str) -> str:
    """A date as "Mon 25 Jan 2027"."""
    return pd.Timestamp(text).strftime("%a %d %b %Y")


def _will(run: RunResult) -> str:
    outlook = run.summary.outlook
    return (
        f"The chance that at least one patient finds no free bed in the next {outlook.weeks} "
        f"weeks is <strong>{outlook.p_bed_shortfall:.0%}</strong> (95% interval "
        f"{band(outlook.p_bed_shortfall, outlook.p_bed_shortfall_se)}, from {run.paths:,} "
        f"simulated paths)."
    )


def _when(run: RunResult) -> str:
    weekly = run.summary.weekly
    worst = weekly.nlargest(WORST_WEEKS, "p_bed_shortfall", keep="first")
    weeks = "; ".join(
        f"week from {day(row.week_start)}: {row.p_bed_shortfall:.0%}" for row in worst.itertuples()
    )
    text = f"Weeks most likely to run short of beds (chance in that week): {weeks}."
    table = run.summary.shift_weekdays
    if table is not None and len(table):
        top = table.nlargest(2, "p_short", keep="first")
        shifts = "; then ".join(
            f"the {row.shift} shift on {row.weekday}s ({row.p_short:.0%} of such shifts, "
            f"{row.nurses_rostered} nurses rostered)"
            for row in top.itertuples()
        )
        text += f" Shifts most often short of registered nurses: {shifts}."
    return text


def _how_badly(run: RunResult) -> str:
    outlook = run.summary.outlook
    first = run.summary.weekly.iloc[: outlook.weeks]
    text = (
        f"Over those {outlook.weeks} weeks, on average {outlook.expected_patients_affected:.1f} "
        f"patients in all would find no free bed"
    )
    if run.scenario.ward.policy == "wait":
        text += (
            f", waiting {first['expected_wait_hours'].sum():,.0f} hours for one (all of them "
            f"together, not per patient)"
        )
    else:
        text += f"; {first['expected_diverted'].sum():.1f} of them placed elsewhere"
    worst = run.summary.weekly.loc[run.summary.weekly["expected_patients_affected"].idxmax()]
    return text + (
        f". The worst week for patients, from {day(worst['week_start'])}, has "
        f"{worst['expected_patients_affected']:.1f} patients finding no free bed on average."
    )


def _fix(run: RunResult) -> str:
    source = run.scenario.source.name
    compare = (
        f"To test a change (more beds, another rota, earlier discharges), copy "
        f"{html.escape(source)}, change it and run <code>planner compare "
        f"{html.escape(source)} changed.toml</code>: both plans see the same simulated "
        f"patients, with paired differences and costs."
    )
    if run.sizing is not None:
        return (
            f"{html.escape(sizing_report.sentence(run.sizing))} Nurses per shift and weekday "
            f'for that target: the table under "What the ward needs". ' + compare
        )
    return (
        f"This scenario sets no [sizing] target. <code>planner size {html.escape(source)}"
        f"</code> finds the fewest beds, and nurses per shift and weekday, that keep the risk "
        f"under a target in every week. " + compare
    )


def answer(run: RunResult) -> str:
    """The first screen: four questions and their answers, as HTML."""
    items = (
        ("Will the ward run short of beds?", _will(run)),
        ("When?", _when(run)),
        ("How badly?", _how_badly(run)),
        ("What would fix it?", _fix(run)),
    )
    body = "".join(f"<dt>{html.escape(q)}</dt><dd>{a}</dd>" for q, a in items)
    return f'<dl class="answer">{body}</dl>'


def _by_weekday(table: pd.DataFrame, rows: dict[str, object]) -> pd.DataFrame:
    """One row per shift and measure, one column per weekday: ``rows`` maps a measure's label
    (shown after the shift's name) to a function of the shift's rows giving its texts."""
    lines = []
    for shift, group in table.groupby("shift", sort=False):
        for label, texts in rows.items():
            line = {"shift: measure": f"{shift}: {label}"}
            line |= dict(zip(group["weekday"].map(SHORT_WEEKDAYS), texts(group), strict=True))
            lines.append(line)
    return pd.DataFrame(lines)


def staffing_view(table: pd.DataFrame) -> pd.DataFrame:
    """shift_weekdays.csv's staffing columns: shifts and measures by weekday."""
    return _by_weekday(
        table,
        {
            "nurses rostered (per shift)": lambda g: g["nurses_rostered"].map(str),
            "chance short of nurses (% of paths, per shift)": lambda g: g["p_short"].map(
                "{:.0%}".format
            ),
            "nurses missing (mean per shift)": lambda g: g["expected_shortfall"].map(
                "{:.2f}".format
            ),
        },
    )


def occupancy_view(table: pd.DataFrame) -> pd.DataFrame:
    """shift_weekdays.csv's occupancy columns: shifts and measures by weekday."""
    return _by_weekday(
        table,
        {
            "highest occupied beds (median / 90% of paths, per shift)": lambda g: (
                g["peak_occupancy_p50"].map("{:.0f}".format)
                + " / "
                + g["peak_occupancy_p90"].map("{:.0f}".format)
            ),
            "beds open (mean)": lambda g: g["beds_open"].map("{:.0f}".format),
            "chance every bed is taken at some moment (% of paths, per shift)": lambda g: g[
                "p_full"
            ].map("{:.0%}".format),
        },
    )


def shift_sections(run: RunResult) -> list[tuple[str, str]]:
    """The staffing and occupancy tables by shift and weekday."""
    table = run.summary.shift_weekdays
    if table is None or not len(table):
        return []
    worst_se = max(table["p_short_se"].max(), table["p_full_se"].max())
    days = table["days"].min(), table["days"].max()
    count = f"{days[0]}" if days[0] == days[1] else f"{days[0]}-{days[1]}"
    note = (
        f"<p>Each chance is the share of simulated paths in which one such shift is short "
        f"(or full), averaged over the {count} days with that weekday in the forecast; its "
        f"Monte Carlo standard error is at most "
        f"{worst_se:.1%} (1 SE, across paths). All columns are in shift_weekdays.csv.</p>"
    )
    occupancy = (
        "<p>The engines record the highest occupancy of each shift, not of each hour, so the "
        "shift is the finest time of day shown. A ward full during a shift is where patients "
        "start to wait.</p>"
    )
    return [
        ("Staffing by shift and weekday", html.table(staffing_view(table)) + note),
        ("Occupancy by shift and weekday", html.table(occupancy_view(table)) + occupancy),
    ]

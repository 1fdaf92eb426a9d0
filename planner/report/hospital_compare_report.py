"""The hospital comparison report: ``comparison.csv`` (per plan and week, each hospital
measure and its paired difference to the first plan), ``glance.csv`` (per plan over the
horizon), ``comparison.html``, and ``plans/<plan>/`` with each plan's hospital files."""

from __future__ import annotations

from pathlib import Path

import pandas as pd

from planner.report import first_screen, html
from planner.report.files import write_csv
from planner.report.hospital_report import ward_folder, write_hospital_files
from planner.results import HospitalComparison

#: The glance table's measures and their words.
GLANCE = {
    "p_no_bed_anywhere": "chance some patient finds no bed anywhere, whole forecast",
    "expected_no_bed": "patients finding no bed anywhere (mean total)",
    "p_diversion": "chance of a diversion out of the hospital",
    "expected_outliers_placed": "outliers placed (mean total)",
    "expected_outlier_bed_days": "outlier bed-days (mean total)",
}


def glance_view(glance: pd.DataFrame) -> pd.DataFrame:
    """The glance table for people: each measure ± SE, and its paired difference ± SE."""
    view = pd.DataFrame({"plan": glance["scenario"]})
    for name, words in GLANCE.items():
        spec = "{:.1%}" if name.startswith("p_") else "{:.1f}"
        value = glance[name].map(spec.format) + " ± " + glance[f"{name}_se"].map(spec.format)
        diff = glance[f"diff_{name}"].map(("{:+.1%}" if name.startswith("p_") else "{:+.1f}")
                                          .format) + " ± " + glance[f"diff_{name}_se"].map(
            spec.format)  # fmt: skip
        view[words] = value
        view[f"{words}: change from {glance['scenario'].iloc[0]}"] = diff.where(
            glance.index > 0, ""
        )
    return view


#: Columns of the terminal's glance table and their short headers.
TERMINAL = {"p_no_bed_anywhere": "P(no bed anywhere)", "expected_no_bed": "no bed",
            "expected_outliers_placed": "outliers", "p_diversion": "P(diversion)"}  # fmt: skip


def terminal_glance(glance: pd.DataFrame) -> str:
    """The glance table as text: each measure over the horizon and its paired change."""
    columns = {"plan": glance["scenario"]}
    for name, header in TERMINAL.items():
        chance = name.startswith("p_")
        columns[header] = glance[name].map("{:.0%}".format if chance else "{:.1f}".format)
        change = glance[f"diff_{name}"].map("{:+.0%}".format if chance else "{:+.1f}".format)
        columns[f"{header} vs first"] = change.where(glance.index > 0, "")
    return pd.DataFrame(columns).to_string(index=False)


def weekly_view(table: pd.DataFrame) -> pd.DataFrame:
    """Week by week, each plan's chance that some patient finds no bed anywhere (± SE)."""
    shown = table.assign(
        value=table["p_no_bed_anywhere"].map("{:.1%}".format)
        + " ± " + table["p_no_bed_anywhere_se"].map("{:.1%}".format)
    )  # fmt: skip
    wide = shown.pivot(index="week_start", columns="scenario", values="value")
    wide = wide[list(dict.fromkeys(table["scenario"]))].reset_index()
    wide["week_start"] = wide["week_start"].map(first_screen.day)
    return wide.rename(columns={"week_start": "week from"})


def write_hospital_compare_files(
    comparison: HospitalComparison, folder: Path, jobs: int = 1
) -> None:
    write_csv(comparison.table, folder / "comparison.csv")
    write_csv(comparison.glance, folder / "glance.csv")
    links = []
    for run in comparison.runs:
        place = folder / "plans" / ward_folder(run.scenario.name)
        place.mkdir(parents=True, exist_ok=True)
        write_hospital_files(run, place, jobs)
        links.append(f'<li><a href="plans/{ward_folder(run.scenario.name)}/report.html">'
                     f"{html.escape(run.scenario.name)}</a></li>")  # fmt: skip
    first = comparison.runs[0]
    subtitle = (f"{len(comparison.runs)} plans of {len(first.scenario.names)} wards "
                f"({', '.join(first.scenario.names)}), {first.paths} paths, seed {first.seed}; "
                f"every plan on the same forecast paths and random numbers (paired).")  # fmt: skip
    sections = [
        ("The plans at a glance", html.table(glance_view(comparison.glance))
         + "<p>Changes are paired differences from the first plan, path by path, ± 1 Monte "
           "Carlo standard error. comparison.csv has every measure week by week.</p>"),
        ("Chance some patient finds no bed anywhere, week by week",
         html.table(weekly_view(comparison.table))),
        ("Each plan", f"<ul>{''.join(links)}</ul>"),
    ]  # fmt: skip
    page = html.page(f"Hospital plans compared: {first.scenario.name}", sections, subtitle)
    (folder / "comparison.html").write_text(page)

"""The hospital report: files, terminal lines and the page written by ``planner run`` on a
hospital file.

Folder layout: ``report.html`` (the hospital page) and its chart ``no_bed.png``,
``hospital.csv`` (one row per week for the whole hospital), ``outlying.csv`` (one row per ward
and week), ``placements.csv`` (outliers placed over the forecast, home ward by host ward),
``run.json``, and ``wards/<name>/`` with each ward's files as ``planner run`` writes them for
one ward (their numbers include what outlying did to the ward). Columns: docs/hospital.md.
"""

from __future__ import annotations

import re
from pathlib import Path

import pandas as pd

from planner.report import first_screen, html
from planner.report.files import run_record, write_csv, write_json
from planner.report.hospital_charts import no_bed_by_week
from planner.report.run_report import write_run_files
from planner.results import HospitalRun
from planner.summaries.hospital import hospital_outlook
from planner.summaries.weekly import HEADLINE_WEEKS

#: Columns of the hospital table printed in the terminal, with their short headers.
TERMINAL_COLUMNS = {
    "week_start": "week from",
    "p_no_bed_anywhere": "P(no bed anywhere)",
    "expected_no_bed": "no bed",
    "p_diversion": "P(diversion)",
    "expected_outliers_placed": "outliers",
    "expected_outlier_bed_days": "outlier bed-days",
    "expected_cancelled_with_outliers": "cancelled w/ outliers",
}


def ward_folder(name: str) -> str:
    """A ward's folder name: its name with anything but letters, digits, - and _ as _."""
    return re.sub(r"[^A-Za-z0-9_-]+", "_", name).strip("_") or "ward"


def terminal_table(run: HospitalRun) -> str:
    shown = run.table[list(TERMINAL_COLUMNS)].rename(columns=TERMINAL_COLUMNS).copy()
    for column in ("P(no bed anywhere)", "P(diversion)"):
        shown[column] = shown[column].map(lambda p: f"{p:.0%}")
    for column in ("no bed", "outliers", "outlier bed-days", "cancelled w/ outliers"):
        shown[column] = shown[column].map(lambda v: f"{v:.1f}")
    return shown.to_string(index=False)


def headline(run: HospitalRun) -> str:
    """One sentence on the hospital's first weeks."""
    view = hospital_outlook(run.weeks, HEADLINE_WEEKS)
    return (
        f"Chance that some patient finds no bed on the home ward or any ward listed for "
        f"outlying in the next {view['weeks']} weeks: {view['p_no_bed_anywhere']:.0%} (95% "
        f"interval {first_screen.band(view['p_no_bed_anywhere'], view['p_no_bed_anywhere_se'])}"
        f"); chance of a diversion out of the hospital: {view['p_diversion']:.0%}; on average "
        f"{view['expected_outliers_placed']:.1f} patients placed on another ward in that time."
    )


def ward_lines(run: HospitalRun) -> pd.DataFrame:
    """One row per ward over the first weeks: beds, the chance one of its patients finds no
    bed anywhere, its patients placed elsewhere, other wards' patients it took."""
    weeks = min(HEADLINE_WEEKS, run.weeks.placed.shape[2])
    rows = []
    for w, (name, ward) in enumerate(zip(run.scenario.names, run.wards, strict=True)):
        outlook = ward.summary.outlook
        rows.append({
            "ward": name,
            "beds (mean open)": f"{ward.weekly.beds_open[:weeks].mean():.1f}",
            f"chance its patients find no bed anywhere, {outlook.weeks} weeks (± 1 SE)":
                f"{outlook.p_bed_shortfall:.1%} ± {outlook.p_bed_shortfall_se:.1%}",
            "its patients placed on other wards (mean)":
                f"{run.weeks.placed[:, w, :weeks].sum(axis=1).mean():.1f}",
            "other wards' patients placed here (mean)":
                f"{run.weeks.hosted[:, w, :weeks].sum(axis=1).mean():.1f}",
            "highest occupied beds, week 1 (90% of paths)":
                f"{ward.summary.weekly['peak_census_p90'].iloc[0]:.0f}",
        })  # fmt: skip
    return pd.DataFrame(rows)


def _page_table(table: pd.DataFrame) -> pd.DataFrame:
    def with_se(column: str) -> pd.Series:
        return (
            table[column].map("{:.1%}".format) + " ± " + table[f"{column}_se"].map("{:.1%}".format)
        )

    return pd.DataFrame({
        "week from": table["week_start"].map(first_screen.day),
        "chance some patient finds no bed anywhere (± 1 SE)": with_se("p_no_bed_anywhere"),
        "patients finding no bed anywhere (mean)": table["expected_no_bed"].map("{:.1f}".format),
        "chance of a diversion out of the hospital (± 1 SE)": with_se("p_diversion"),
        "outliers placed (mean)": table["expected_outliers_placed"].map("{:.1f}".format),
        "outlier bed-days (mean)": table["expected_outlier_bed_days"].map("{:.1f}".format),
        "outliers moved home (mean)": table["expected_moved_back"].map("{:.1f}".format),
        "planned patients cancelled while the ward held outliers (mean)":
            table["expected_cancelled_with_outliers"].map("{:.1f}".format),
    })  # fmt: skip


def _placements(run: HospitalRun) -> pd.DataFrame:
    frame = run.placements.map("{:.1f}".format)
    return frame.reset_index().rename(columns={"home": "home ward \\ host ward"})


def hospital_page(run: HospitalRun, picture: bytes) -> str:
    scenario = run.scenario
    start = run.wards[0].history.start
    last = start + pd.Timedelta(days=scenario.horizon_days - 1)
    subtitle = (f"{scenario.description} Forecast {start.date()} to {last.date()}, {run.paths} "
                f"sample paths, seed {run.seed}, {len(scenario.names)} wards.")  # fmt: skip
    links = "".join(
        f'<li><a href="wards/{ward_folder(name)}/report.html">{html.escape(name)}</a></li>'
        for name in scenario.names
    )
    rules = "".join(f"<li>{html.escape(line)}</li>" for line in scenario.describe_outlying())
    forecast = ("The wards' admission forecasts are drawn together: each path takes the same "
                "past days' forecast errors on every ward, so busy days come together as they "
                "did in the records.")  # fmt: skip
    if run.forecast_note:
        forecast += " " + run.forecast_note
    sections = [
        ("", f'<p class="headline">{html.escape(headline(run))}</p>'),
        ("Chance of no bed anywhere", html.image(picture, "weekly chance of no bed anywhere")),
        ("Wards", html.table(ward_lines(run)) + f"<ul>{links}</ul>"),
        ("Week by week, the whole hospital", html.table(_page_table(run.table))
         + "<p>Chances are shares of the simulated paths, ± 1 Monte Carlo standard error; "
           "counts are means over paths. A patient finds no bed anywhere when neither the home "
           "ward nor any ward listed for its outlying has a free bed; the patient then waits "
           "or is diverted as the home ward's policy says. All columns are in hospital.csv; "
           "per ward in outlying.csv.</p>"),
        ("Where outliers went (mean per path over the forecast)",
         html.table(_placements(run))),
        ("Rules between the wards", f"<ul>{rules}</ul>"),
        ("Forecasts", f"<p>{html.escape(forecast)}</p>"),
    ]  # fmt: skip
    return html.page(f"Hospital plan: {scenario.name}", sections, subtitle)


#: What forked writers of ward folders read (set just before they are forked).
_WRITING: dict[str, object] = {}


def _write_ward(index: int) -> None:
    run, folder = _WRITING["run"], _WRITING["folder"]
    name, ward = run.scenario.names[index], run.wards[index]
    place = folder / "wards" / ward_folder(name)
    place.mkdir(parents=True, exist_ok=True)
    write_run_files(ward, place)


def _write_wards(run: HospitalRun, folder: Path, jobs: int) -> None:
    """Every ward's files, in ``jobs`` processes forked for the purpose where processes can
    be forked (charts and workbooks take about a second a ward), else one after another."""
    import multiprocessing
    from concurrent.futures import ProcessPoolExecutor

    _WRITING.update(run=run, folder=folder)
    try:
        wards = range(len(run.wards))
        if jobs < 2 or len(run.wards) < 2 or "fork" not in multiprocessing.get_all_start_methods():
            for index in wards:
                _write_ward(index)
            return
        context = multiprocessing.get_context("fork")
        with ProcessPoolExecutor(min(jobs, len(run.wards)), mp_context=context) as pool:
            for done in [pool.submit(_write_ward, index) for index in wards]:
                done.result()
    finally:
        _WRITING.clear()


def write_hospital_files(run: HospitalRun, folder: Path, jobs: int = 1) -> None:
    """All files of a hospital run into ``folder`` (module docstring); the wards' folders in
    ``jobs`` processes."""
    write_csv(run.table, folder / "hospital.csv")
    write_csv(run.outlying, folder / "outlying.csv")
    write_csv(run.placements.reset_index(), folder / "placements.csv")
    _write_wards(run, folder, jobs)
    picture = no_bed_by_week(run)
    (folder / "no_bed.png").write_bytes(picture)
    (folder / "report.html").write_text(hospital_page(run, picture))
    inputs = sorted({path for ward in run.scenario.scenarios
                     for path in (ward.admissions_file, ward.episodes_file) if path})  # fmt: skip
    resolved = {"name": run.scenario.name, "wards": dict(zip(run.scenario.names,
                [str(ward.source) for ward in run.scenario.scenarios], strict=True)),
                "outlying": run.scenario.describe_outlying()}  # fmt: skip
    extra = {"start": run.wards[0].history.start.date(),
             "horizon_days": run.scenario.horizon_days,
             "timings_s": {k: round(v, 3) for k, v in run.timings.items()}}  # fmt: skip
    record = run_record("run", run.scenario.source, resolved, inputs, run.seed, run.paths, extra)
    write_json(record, folder / "run.json")

"""The hospital sizing report: ``sizing.csv`` (one row per step of the search: what changed,
the beds per ward, the total, the highest weekly chance that some patient finds no bed
anywhere, the expected patients left without a bed), ``sizing.html`` and ``run.json``."""

from __future__ import annotations

from pathlib import Path

from planner.report import html
from planner.report.files import run_record, write_csv, write_json
from planner.results import HospitalSizing


def _split(names, beds) -> str:
    return ", ".join(f"{name} {n}" for name, n in zip(names, beds, strict=True))


def sentence(result: HospitalSizing) -> str:
    """The answer in one or two sentences."""
    names = result.scenario.names
    now = f"now {sum(result.start_beds)}: {_split(names, result.start_beds)}"
    risk = f"{result.risk:.1%} ± {result.risk_se:.1%}"
    if result.total is None:
        return (f"To keep the weekly chance that some patient finds no bed anywhere at or under "
                f"{result.target:.0%} in every week, the hospital needs {sum(result.beds)} beds: "
                f"{_split(names, result.beds)} ({now}); the highest weekly chance is then "
                f"{risk}, and {result.unmet:.1f} patients on average find no bed anywhere or "
                f"are cancelled over the forecast.")  # fmt: skip
    held = "holds" if result.met else "does NOT hold"
    return (f"Sharing {result.total} beds: {_split(names, result.beds)} ({now}); the highest "
            f"weekly chance that some patient finds no bed anywhere is {risk}, so the "
            f"{result.target:.0%} target {held}; {result.unmet:.1f} patients on average find no "
            f"bed anywhere or are cancelled over the forecast.")  # fmt: skip


def write_hospital_sizing_files(result: HospitalSizing, folder: Path) -> None:
    write_csv(result.steps, folder / "sizing.csv")
    steps = result.steps.copy()
    steps["risk"] = steps["risk"].map("{:.1%}".format)
    steps["expected_unmet"] = steps["expected_unmet"].map("{:.1f}".format)
    steps = steps.rename(columns={
        "risk": "highest weekly chance some patient finds no bed anywhere",
        "expected_unmet": "patients finding no bed anywhere or cancelled (mean, whole forecast)",
    })  # fmt: skip
    how = ("Each step adds, takes away or moves one bed, judged by the patients left without "
           "a bed (no bed anywhere, or a cancelled planned admission), on the same forecast "
           f"paths and random numbers for every split; a move between wards must save at least "
           f"{result.least_gain:g} patient over the forecast. Greedy steps find a good split, "
           "not a proven best one. Only the base beds change; dated bed changes stay.")  # fmt: skip
    sections = [
        ("", f'<p class="headline">{html.escape(sentence(result))}</p>'),
        ("The search, step by step", html.table(steps) + f"<p>{html.escape(how)}</p>"),
    ]
    subtitle = f"{result.paths} paths, seed {result.seed}."
    page = html.page(f"Hospital beds for a target: {result.scenario.name}", sections, subtitle)
    (folder / "sizing.html").write_text(page)
    inputs = sorted({path for ward in result.scenario.scenarios
                     for path in (ward.admissions_file, ward.episodes_file) if path})  # fmt: skip
    resolved = {"name": result.scenario.name, "target": result.target, "total": result.total}
    extra = {"beds": dict(zip(result.scenario.names, result.beds, strict=True))}
    record = run_record("size", result.scenario.source, resolved, inputs, result.seed,
                        result.paths, extra)  # fmt: skip
    write_json(record, folder / "run.json")

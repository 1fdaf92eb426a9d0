"""``planner run`` on a hospital file: the wards together (:mod:`planner.hospital`)."""

from __future__ import annotations

import sys
from pathlib import Path

import click


def run_hospital_file(path: Path, out: Path | None, overwrite: bool, options) -> None:
    """Forecast, simulate and report a hospital; print its weekly table and headline."""
    from planner.outputs import atomic_folder, default_folder
    from planner.report.hospital_report import headline, terminal_table, write_hospital_files
    from planner.report.html import CAUTION
    from planner.runs.hospital import load_histories, run_hospital
    from planner.scenario_hospital import load_hospital

    scenario = load_hospital(path)
    histories = load_histories(scenario)
    target = out if out is not None else default_folder(scenario.name, "run")
    if sys.stderr.isatty():
        click.echo(f"{scenario.name}: forecasting admissions of {len(scenario.names)} wards",
                   err=True)  # fmt: skip
    with atomic_folder(target, overwrite) as folder:
        run = run_hospital(scenario, options, histories=histories)
        write_hospital_files(run, folder, options.jobs)
    start = histories[0].start.date()
    click.echo(f"{scenario.name}: {', '.join(scenario.names)}; {run.paths} paths from {start}")
    for line in scenario.describe_outlying():
        click.echo(f"  {line}")
    click.echo(terminal_table(run))
    for name, ward in zip(scenario.names, run.wards, strict=True):
        outlook = ward.summary.outlook
        click.echo(f"{name}: chance its patients find no bed anywhere in {outlook.weeks} weeks "
                   f"{outlook.p_bed_shortfall:.0%}")  # fmt: skip
    if run.forecast_note:
        click.echo(run.forecast_note)
    click.echo(headline(run))
    click.echo(CAUTION)
    click.echo(f"wrote {target}/report.html")


def compare_hospital_files(paths: list[Path], out: Path | None, overwrite: bool, options) -> None:
    """Compare hospital plans paired; print the glance table."""
    from planner.cli.base import progress_bar
    from planner.outputs import atomic_folder, default_folder
    from planner.report.hospital_compare_report import terminal_glance, write_hospital_compare_files
    from planner.report.html import CAUTION
    from planner.runs.hospital_compare import compare_hospitals
    from planner.scenario_hospital import load_hospital

    first = load_hospital(paths[0])
    target = out if out is not None else default_folder(first.name, "compare")
    with atomic_folder(target, overwrite) as folder:
        comparison = compare_hospitals(paths, options, lambda label: progress_bar(label))
        write_hospital_compare_files(comparison, folder, options.jobs)
    click.echo(terminal_glance(comparison.glance))
    click.echo(CAUTION)
    click.echo(f"wrote {target}/comparison.html")


def size_hospital_file(path: Path, out: Path | None, overwrite: bool, sizing, options) -> None:
    """Beds per ward for a hospital target (``sizing``: target, total or None)."""
    from planner.outputs import atomic_folder, default_folder
    from planner.report.hospital_sizing_report import sentence, write_hospital_sizing_files
    from planner.report.html import CAUTION
    from planner.runs.hospital_sizing import size_hospital
    from planner.scenario_hospital import load_hospital

    target, total = sizing
    scenario = load_hospital(path)
    stated = "" if target is not None else " (by default)"
    target = 0.05 if target is None else target
    what = f"shares {total} beds" if total is not None else "needs the fewest beds"
    goal = f"some patient finds no bed anywhere at or under {target:.0%}{stated}"
    click.echo(f"{scenario.name}: the split of beds that {what}, keeping the weekly chance that "
               f"{goal}")  # fmt: skip
    target_folder = out if out is not None else default_folder(scenario.name, "size")
    with atomic_folder(target_folder, overwrite) as folder:
        result = size_hospital(scenario, target, total, options)
        write_hospital_sizing_files(result, folder)
    click.echo(result.steps.to_string(index=False, float_format=lambda v: f"{v:.3f}"))
    click.echo(sentence(result))
    click.echo(CAUTION)
    click.echo(f"wrote {target_folder}/sizing.html")


def check_hospital_file(path: Path) -> list[str]:
    """What ``planner check`` says of a hospital file: each ward's check, then the rules."""
    from planner.runs.hospital import load_histories
    from planner.runs.run import check_scenario
    from planner.scenario_hospital import load_hospital

    scenario = load_hospital(path)
    histories = load_histories(scenario)
    first = histories[0].start.date()
    lines = [f"{scenario.source}: ok", f"hospital: {scenario.name}, {len(scenario.names)} wards",
             f"forecast: {scenario.horizon_weeks} weeks from {first}, {scenario.paths} paths, "
             f"seed {scenario.seed} (the hospital's, for every ward)"]  # fmt: skip
    for name, ward in zip(scenario.names, scenario.scenarios, strict=True):
        lines.append(f"ward {name} ({ward.source.name}):")
        lines += [f"  {line}" for line in check_scenario(ward.source, ward)[1:]]
    lines += [f"outlying: {line}" for line in scenario.describe_outlying()]
    return lines

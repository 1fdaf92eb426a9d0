"""The command that sizes a ward: size."""

from __future__ import annotations

from pathlib import Path

import click

from planner.cli.base import (
    load_plan,
    output_options,
    output_target,
    run_options,
    scenario_argument,
    simulation_options,
    user_errors,
)
from planner.errors import PlannerError
from planner.schema import choices


def sizing_request(plan, measure: str | None, target: float | None, shift_target: float | None):
    """The scenario's [sizing] values with the options given on top
    (:func:`planner.summaries.sizing.requested_target`)."""
    from planner.summaries.sizing import requested_target

    return requested_target(plan, {"measure": measure, "target": target,
                                   "shift_target": shift_target}, "--")  # fmt: skip


def _worst_weeks(result) -> str:
    """Every bed count tried: the worst week's risk and its standard error, weeks over."""
    import pandas as pd

    spec = ".1%" if result.target.is_share else ".1f"
    table = result.candidates
    rows = []
    for beds, group in table.groupby("beds"):
        worst = group.loc[group["risk"].idxmax()]
        over = int((group["risk"] > result.target.target).sum())
        rows.append({"beds": beds, "worst week": f"{worst['risk']:{spec}} ± "
                     f"{worst['risk_se']:{spec}}", "weeks over target": over})  # fmt: skip
    return pd.DataFrame(rows).to_string(index=False)


@click.command()
@scenario_argument
@output_options
@click.option(
    "--measure",
    type=click.Choice(choices("sizing.measure")),
    default=None,
    help="Risk measure (default: the scenario's [sizing] measure, else no_bed_week).",
)
@click.option(
    "--target",
    type=click.FloatRange(min=0, min_open=True),
    default=None,
    help="Largest acceptable risk in every week: a share (0.05 = 5%) or hours for "
    "wait_hours (default: the scenario's, else 0.05 or 24 hours).",
)
@click.option(
    "--shift-target",
    type=click.FloatRange(min=0, max=1, min_open=True, max_open=True),
    default=None,
    help="Largest acceptable chance of a shift short of nurses (default: the scenario's, "
    "else 0.05).",
)
@click.option(
    "--total",
    type=click.IntRange(min=1),
    default=None,
    help="Hospital files only: share this many beds between the wards (default: find the "
    "total the target needs).",
)
@simulation_options
@user_errors
def size(
    scenario: Path | None,
    out,
    overwrite,
    paths,
    seed,
    measure,
    target,
    shift_target,
    total,
    engine,
    jobs,
    scheduler,
) -> None:
    """Find the fewest beds, and nurses per shift and weekday, that keep a risk under a target
    in every forecast week, beside the classical sizes: sizing.csv, roster.csv, a chart,
    sizing.html. Given a hospital file: the beds per ward that keep the weekly chance that
    some patient finds no bed anywhere under the target (--target, default 0.05), for the
    fewest beds or sharing --total beds."""
    from planner.scenario_hospital import is_hospital_file

    if is_hospital_file(scenario):
        from planner.cli.hospital import size_hospital_file

        if measure is not None or shift_target is not None:
            raise PlannerError("size: --measure and --shift-target are for ward scenarios; a "
                               "hospital is sized on the chance of no bed anywhere")  # fmt: skip
        options = run_options(paths, seed, engine, jobs, scheduler)
        return size_hospital_file(scenario, out, overwrite, (target, total), options)
    if total is not None:
        raise PlannerError("size: --total is for hospital files (wards listed with [[ward]])")
    from planner.outputs import atomic_folder
    from planner.report.html import CAUTION
    from planner.report.sizing_report import roster_view, sentence, write_sizing_files
    from planner.runs.sizing import check_measure, size_scenario

    plan, history = load_plan(scenario)
    request = sizing_request(plan, measure, target, shift_target)
    check_measure(plan, request)
    folder_name = output_target(out, plan, "size")
    options = run_options(paths, seed, engine, jobs, scheduler)
    defaults = f" (by default: {request.defaults_text()})" if request.defaults else ""
    click.echo(
        f"{plan.name}: fewest beds keeping {request.describe()} in every week, measure "
        f"{request.measure}, nurses for a {request.shift_target:.0%} chance of a short "
        f"shift{defaults}"
    )
    with atomic_folder(folder_name, overwrite) as folder:
        result = size_scenario(plan, request, options, history=history)
        write_sizing_files(result, folder)
    click.echo(f"{result.paths} paths from {result.start.date()}, seed {result.seed}")
    click.echo(_worst_weeks(result))
    click.echo(sentence(result))
    click.echo(f"Nurses needed with {result.roster_beds} beds:")
    click.echo(roster_view(result.roster).to_string(index=False))
    click.echo(CAUTION)
    click.echo(f"wrote {folder_name}/sizing.html")

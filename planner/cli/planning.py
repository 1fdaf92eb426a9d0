"""Commands that simulate ward plans: simulate, run, compare, hindcast."""

from __future__ import annotations

from pathlib import Path

import click

from planner.cli.base import (
    engine_option,
    jobs_option,
    load_plan,
    output_options,
    output_target,
    progress_bar,
    run_options,
    run_plan,
    scenario_argument,
    simulation_options,
    user_errors,
    worker_count,
)
from planner.errors import PlannerError


@click.command()
@scenario_argument
@output_options
@simulation_options
@user_errors
def simulate(scenario: Path | None, out, overwrite, paths, seed, engine, jobs, scheduler) -> None:
    """Forecast and simulate the ward: daily.csv and shifts.csv."""
    from planner.outputs import atomic_folder
    from planner.report.files import write_csv

    plan, history = load_plan(scenario)
    target = output_target(out, plan, "simulate")
    with atomic_folder(target, overwrite) as folder:
        run = run_plan(plan, history, run_options(paths, seed, engine, jobs, scheduler))
        write_csv(run.summary.daily, folder / "daily.csv")
        write_csv(run.summary.shifts, folder / "shifts.csv")
    patients = int(run.forecast.paths.sum())
    click.echo(
        f"simulated {run.paths} paths, {patients} patients in {run.timings['simulate_s']:.1f} s"
    )
    click.echo(f"wrote {target}/daily.csv and shifts.csv")


@click.command()
@scenario_argument
@output_options
@simulation_options
@user_errors
def run(scenario: Path | None, out, overwrite, paths, seed, engine, jobs, scheduler) -> None:
    """Forecast, simulate and report: weekly.csv, charts, report.html, run.json. Given a
    hospital file (wards listed with [[ward]]), the wards run together with their outlying
    rules: hospital.csv, outlying.csv, placements.csv, report.html and each ward's files."""
    from planner.outputs import DEFAULT_ROOT, atomic_folder
    from planner.scenario_hospital import is_hospital_file

    if is_hospital_file(scenario):
        from planner.cli.hospital import run_hospital_file

        options = run_options(paths, seed, engine, jobs, scheduler)
        return run_hospital_file(scenario, out, overwrite, options)
    from planner.report.html import CACHED_BACKTEST, CAUTION
    from planner.report.run_report import headline, terminal_table, write_run_files
    from planner.runs.hindcast import latest_hindcast

    plan, history = load_plan(scenario)
    target = output_target(out, plan, "run")
    with atomic_folder(target, overwrite) as folder:
        result = run_plan(plan, history, run_options(paths, seed, engine, jobs, scheduler))
        hindcast = latest_hindcast([DEFAULT_ROOT, target.parent], plan)
        write_run_files(result, folder, hindcast)
    click.echo(f"{plan.name}: {result.paths} paths from {result.history.start.date()}")
    backtest = result.forecast.summary.backtest
    if backtest is not None and backtest.from_cache:
        click.echo(CACHED_BACKTEST)
    click.echo(terminal_table(result.summary.weekly))
    drift = result.forecast.summary.drift
    if drift is not None:
        click.echo(drift.message())
    click.echo(headline(result))
    click.echo(CAUTION)
    click.echo(f"wrote {target}/report.html")


@click.command()
@click.argument(
    "scenarios", nargs=-1, required=True, type=click.Path(dir_okay=False, path_type=Path)
)
@output_options
@click.option(
    "--independent",
    is_flag=True,
    help="Compare plans that do not share their history and forecast (different wards, "
    "history files or forecast settings) as independent runs, each with its own seed and "
    "unpaired standard errors.",
)
@simulation_options
@user_errors
def compare(
    scenarios: tuple[Path, ...], out, overwrite, paths, seed, independent, engine, jobs, scheduler
) -> None:
    """Compare ward plans (the first is the reference) with common random numbers:
    comparison.csv, costs.csv, a chart and comparison.html."""
    from planner.outputs import atomic_folder, default_folder
    from planner.report.compare_report import write_compare_files
    from planner.runs.compare import compare_scenarios
    from planner.scenario import load_scenario
    from planner.scenario_hospital import is_hospital_file

    hospitals = [is_hospital_file(path) for path in scenarios]
    if any(hospitals):
        from planner.cli.hospital import compare_hospital_files

        if not all(hospitals):
            raise PlannerError("compare: give only hospital files or only ward scenarios, not both")
        if independent:
            raise PlannerError("compare: --independent is for ward plans; hospital plans compare "
                            "paired")  # fmt: skip
        options = run_options(paths, seed, engine, jobs, scheduler)
        return compare_hospital_files(list(scenarios), out, overwrite, options)
    first = load_scenario(scenarios[0])
    target = out if out is not None else default_folder(first.name, "compare")

    def progress(label: str):
        return progress_bar(f"simulating {label}")

    with atomic_folder(target, overwrite) as folder:
        options = run_options(paths, seed, engine, jobs, scheduler)
        result = compare_scenarios(list(scenarios), options, progress, independent)
        write_compare_files(result, folder)
    if independent:
        click.echo(INDEPENDENT_NOTE)
    click.echo(result.glance.to_string(index=False, float_format=lambda v: f"{v:.3f}"))
    if result.costs is not None:
        click.echo(result.costs.to_string(index=False, float_format=lambda v: f"{v:,.1f}"))
    click.echo(f"wrote {target}/comparison.html")


#: Said by `planner compare --independent` before its table.
INDEPENDENT_NOTE = (
    "compared as independent runs (--independent): each plan has its own seed and every "
    "difference has the unpaired standard error"
)


#: Hindcast defaults: past start dates over the last 26 weeks, paths per start date.
HINDCAST_WEEKS = 26
HINDCAST_PATHS = 300


@click.command()
@scenario_argument
@output_options
@click.option(
    "--origins",
    type=click.IntRange(min=1),
    default=None,
    help="Number of past start dates (default: as many as fit in 26 weeks).",
)
@click.option(
    "--every",
    "every_days",
    type=click.IntRange(min=1),
    default=14,
    show_default=True,
    help="Days between past start dates.",
)
@engine_option
@jobs_option
@user_errors
def hindcast(
    scenario: Path | None, out, overwrite, paths, seed, origins, every_days, engine, jobs
) -> None:
    """Start the setup at past dates with only what was known then and compare its census
    forecast with the census that happened: hindcast.csv, charts, hindcast.html."""
    from planner.outputs import atomic_folder
    from planner.report.hindcast_report import headline, write_hindcast_files
    from planner.report.hindcast_tables import brier_lines
    from planner.runs.hindcast import hindcast as run_hindcast

    plan, _ = load_plan(scenario)
    target = output_target(out, plan, "hindcast")
    weeks = HINDCAST_WEEKS if origins is None else -(-origins * every_days // 7)
    with atomic_folder(target, overwrite) as folder:
        result = run_hindcast(
            plan,
            None,
            every_days,
            weeks,
            paths or HINDCAST_PATHS,
            seed,
            worker_count(jobs),
            engine or plan.engine,
        )
        write_hindcast_files(result, plan, folder)
    click.echo(headline(result))
    for line in brier_lines(result.overall()):
        click.echo(line)
    click.echo(f"wrote {target}/hindcast.html")

"""Command-line interface: thin commands that parse options, call one library function and
print or write its result. Every user error is one line on stderr and exit status 2."""

from __future__ import annotations

import functools
import os
import sys
from collections.abc import Callable
from pathlib import Path
from typing import Any

import click

from planner import __version__
from planner.errors import PlannerError


class UserError(click.ClickException):
    """A PlannerError shown as one line, exit status 2."""

    exit_code = 2

    def format_message(self) -> str:
        return self.message


def user_errors(command: Callable[..., Any]) -> Callable[..., Any]:
    """Turn PlannerError into a one-line message and exit status 2."""

    @functools.wraps(command)
    def wrapper(*args: Any, **kwargs: Any) -> Any:
        try:
            return command(*args, **kwargs)
        except PlannerError as error:
            raise UserError(str(error)) from None

    return wrapper


scenario_argument = click.argument("scenario", required=False, type=click.Path(path_type=Path))
out_option = click.option(
    "--out",
    type=click.Path(file_okay=False, path_type=Path),
    default=None,
    help="Output folder (default: a new folder under outputs/).",
)
overwrite_option = click.option(
    "--overwrite", is_flag=True, help="Replace the output folder if it exists."
)
paths_option = click.option(
    "--paths",
    type=click.IntRange(min=1),
    default=None,
    help="Number of sample paths (default: the scenario's).",
)
engine_option = click.option(
    "--engine",
    type=click.Choice(["auto", "simpy", "fast"]),
    default=None,
    help="Simulation engine (default: the scenario's, normally auto). Same numbers either way.",
)
jobs_option = click.option(
    "--jobs",
    type=click.IntRange(min=1),
    default=None,
    help="Worker processes for the simulation (default: all cores). Same numbers either way.",
)
scheduler_option = click.option(
    "--scheduler",
    metavar="ADDRESS",
    default=None,
    help="Send the simulation to a dask.distributed scheduler (e.g. tcp://10.0.0.5:8786; "
    "needs planner[dask] on every worker). Same numbers as a local run.",
)
seed_option = click.option(
    "--seed",
    type=click.IntRange(min=0),
    default=None,
    help="Random seed (default: the scenario's).",
)


def output_options(command: Callable[..., Any]) -> Callable[..., Any]:
    """--out, --overwrite, --paths and --seed."""
    for option in (seed_option, paths_option, overwrite_option, out_option):
        command = option(command)
    return command


def simulation_options(command: Callable[..., Any]) -> Callable[..., Any]:
    """--engine, --jobs and --scheduler."""
    return engine_option(jobs_option(scheduler_option(command)))


@click.group(context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name="planner")
def cli() -> None:
    """Ward capacity planning: forecast admissions, simulate beds and nurses, report the
    odds of running short. Without SCENARIO, commands use the bundled demo ward.

    Outputs are decision support: staffing and capacity decisions follow local policy,
    safe-staffing review and professional judgement; ratios are minimums, not guarantees.
    """


@cli.command()
@scenario_argument
@user_errors
def check(scenario: Path | None) -> None:
    """Validate a scenario file and its input files without running anything."""
    from planner.pipeline import check_scenario

    for line in check_scenario(scenario):
        click.echo(line)


def _load(scenario_path: Path | None):
    from planner.pipeline import load_history
    from planner.scenario import load_scenario

    scenario = load_scenario(scenario_path)
    return scenario, load_history(scenario)


def _target(out: Path | None, scenario, command: str) -> Path:
    from planner.outputs import default_folder

    return out if out is not None else default_folder(scenario.name, command)


def _jobs(jobs: int | None) -> int:
    """Worker processes: as asked, else one per core."""
    return jobs if jobs is not None else max(1, os.cpu_count() or 1)


def _run_plan(plan, paths, seed, engine, jobs, scheduler):
    """Forecast, simulate and summarise ``plan`` with the command's options."""
    from planner.pipeline import run_scenario

    if sys.stderr.isatty():
        click.echo(f"{plan.name}: forecasting admissions (fit, backtest, sample paths)", err=True)
    return run_scenario(
        plan,
        paths,
        seed,
        _progress("simulating"),
        None,
        engine or plan.engine,
        _jobs(jobs),
        scheduler,
    )


def _progress(label: str):
    """A progress callback drawing a bar on stderr when it is a terminal, else None."""
    stream = sys.stderr
    if not stream.isatty():
        return None
    state: dict[str, Any] = {}

    def update(done: int, total: int) -> None:
        if "bar" not in state:
            state["bar"] = click.progressbar(length=total, label=label, file=stream)
            state["bar"].__enter__()
        state["bar"].update(done - state["bar"].pos)
        if done >= total:
            state["bar"].__exit__(None, None, None)

    return update


@cli.command()
@scenario_argument
@output_options
@user_errors
def forecast(scenario: Path | None, out, overwrite, paths, seed) -> None:
    """Forecast daily admissions as sample paths: forecast.csv and a fan chart."""
    from planner.outputs import atomic_folder
    from planner.pipeline import forecast_step
    from planner.report.charts import admissions_fan
    from planner.report.files import write_csv

    plan, history = _load(scenario)
    target = _target(out, plan, "forecast")
    with atomic_folder(target, overwrite) as folder:
        result = forecast_step(
            plan, history, paths or plan.paths, plan.seed if seed is None else seed
        )
        table = result.table()
        write_csv(table, folder / "forecast.csv")
        (folder / "admissions.png").write_bytes(admissions_fan(history.admissions, table))
    summary = result.summary
    click.echo(
        f"AR order {summary.order} ({summary.criterion.upper()}), strategy "
        f"{summary.strategy}; {len(table)} days from {history.first_day.date()}"
    )
    click.echo(f"wrote {target}/forecast.csv and admissions.png")


@cli.command()
@scenario_argument
@output_options
@user_errors
def backtest(scenario: Path | None, out, overwrite, paths, seed) -> None:
    """Rolling-origin backtest of the forecast strategies: backtest.csv."""
    from planner.outputs import atomic_folder
    from planner.pipeline import backtest_step
    from planner.report.files import write_csv

    plan, history = _load(scenario)
    target = _target(out, plan, "backtest")
    with atomic_folder(target, overwrite) as folder:
        result = backtest_step(
            plan,
            history,
            paths or plan.forecast.backtest_paths,
            plan.seed if seed is None else seed,
        )
        table = result.table.copy()
        table["horizon_week"] = table["horizon_week"].map(lambda w: "all" if w == 0 else w)
        write_csv(table, folder / "backtest.csv")
    click.echo(table.to_string(index=False, float_format=lambda v: f"{v:.3f}"))
    click.echo(f"wrote {target}/backtest.csv")


@cli.command()
@scenario_argument
@output_options
@simulation_options
@user_errors
def simulate(scenario: Path | None, out, overwrite, paths, seed, engine, jobs, scheduler) -> None:
    """Forecast and simulate the ward: daily.csv and shifts.csv."""
    from planner.outputs import atomic_folder
    from planner.report.files import write_csv
    from planner.simulate import summarise_daily, summarise_shifts

    plan, _ = _load(scenario)
    target = _target(out, plan, "simulate")
    with atomic_folder(target, overwrite) as folder:
        run = _run_plan(plan, paths, seed, engine, jobs, scheduler)
        write_csv(summarise_daily(run.ward), folder / "daily.csv")
        write_csv(summarise_shifts(run.ward), folder / "shifts.csv")
    patients = int(run.forecast.paths.sum())
    click.echo(
        f"simulated {run.paths} paths, {patients} patients in {run.timings['simulate_s']:.1f} s"
    )
    click.echo(f"wrote {target}/daily.csv and shifts.csv")


@cli.command()
@scenario_argument
@output_options
@simulation_options
@user_errors
def run(scenario: Path | None, out, overwrite, paths, seed, engine, jobs, scheduler) -> None:
    """Forecast, simulate and report: weekly.csv, charts, report.html, run.json."""
    from planner.outputs import DEFAULT_ROOT, atomic_folder
    from planner.report.hindcast_report import find_latest_hindcast
    from planner.report.run_report import headline, terminal_table, write_run_files
    from planner.report.weekly import weekly_table
    from planner.simulate import summarise_daily, summarise_shifts

    plan, _ = _load(scenario)
    target = _target(out, plan, "run")
    with atomic_folder(target, overwrite) as folder:
        result = _run_plan(plan, paths, seed, engine, jobs, scheduler)
        hindcast = find_latest_hindcast([DEFAULT_ROOT, target.parent], plan)
        write_run_files(
            result, folder, summarise_daily(result.ward), summarise_shifts(result.ward), hindcast
        )
    click.echo(f"{plan.name}: {result.paths} paths from {result.history.start.date()}")
    click.echo(terminal_table(weekly_table(result.weekly)))
    click.echo(headline(result))
    click.echo(
        "Decision support only: staffing and capacity decisions follow local policy, "
        "safe-staffing review and professional judgement."
    )
    click.echo(f"wrote {target}/report.html")


@cli.command()
@click.argument(
    "scenarios", nargs=-1, required=True, type=click.Path(dir_okay=False, path_type=Path)
)
@output_options
@simulation_options
@user_errors
def compare(
    scenarios: tuple[Path, ...], out, overwrite, paths, seed, engine, jobs, scheduler
) -> None:
    """Compare ward plans (the first is the reference) with common random numbers:
    comparison.csv, costs.csv, a chart and comparison.html."""
    from planner.compare import compare_scenarios
    from planner.outputs import atomic_folder, default_folder
    from planner.report.compare_report import summary_table, write_compare_files
    from planner.scenario import load_scenario

    first = load_scenario(scenarios[0])
    target = out if out is not None else default_folder(first.name, "compare")

    def progress(label: str):
        return _progress(f"simulating {label}")

    with atomic_folder(target, overwrite) as folder:
        result = compare_scenarios(
            list(scenarios), paths, seed, progress, engine, _jobs(jobs), scheduler
        )
        write_compare_files(result, folder)
    summary = summary_table(result)
    click.echo(summary.to_string(index=False, float_format=lambda v: f"{v:.3f}"))
    if result.costs is not None:
        click.echo(result.costs.to_string(index=False, float_format=lambda v: f"{v:,.1f}"))
    click.echo(f"wrote {target}/comparison.html")


#: Hindcast defaults: past start dates over the last 26 weeks, paths per start date.
HINDCAST_WEEKS = 26
HINDCAST_PATHS = 300

#: BLAS threads: the matrices here are small, and threaded BLAS on them is slower, badly so
#: on a busy machine; parallel work is done across paths instead. A user's setting wins.
BLAS_THREAD_VARIABLES = ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS")


@cli.command()
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
    from planner.hindcast import hindcast as run_hindcast
    from planner.outputs import atomic_folder
    from planner.report.hindcast_report import headline, write_hindcast_files

    plan, _ = _load(scenario)
    target = _target(out, plan, "hindcast")
    weeks = HINDCAST_WEEKS if origins is None else -(-origins * every_days // 7)
    with atomic_folder(target, overwrite) as folder:
        result = run_hindcast(
            plan,
            None,
            every_days,
            weeks,
            paths or HINDCAST_PATHS,
            seed,
            _jobs(jobs),
            engine or plan.engine,
        )
        write_hindcast_files(result, plan, folder)
    click.echo(headline(result))
    click.echo(f"wrote {target}/hindcast.html")


def main() -> None:
    """Console-script entry point."""
    for name in BLAS_THREAD_VARIABLES:
        os.environ.setdefault(name, "1")
    cli(prog_name="planner")

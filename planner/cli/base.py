"""The command group, shared options and helpers of the command-line interface."""

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
from planner.schema import choices


class UserError(click.ClickException):
    """A PlannerError shown as one line on stderr that starts with the file or key it names
    (no "Error: " prefix), exit status 2."""

    exit_code = 2

    def format_message(self) -> str:
        return self.message

    def show(self, file=None) -> None:
        click.echo(self.format_message(), file=file, err=True)


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
    type=click.Choice(choices("simulation.engine")),
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


def load_plan(scenario_path: Path | None):
    from planner.runs.run import load_history
    from planner.scenario import load_scenario
    from planner.scenario_hospital import is_hospital_file

    if is_hospital_file(scenario_path):
        raise PlannerError(
            f"{scenario_path}: a hospital file (wards listed with [[ward]]); this command takes "
            f"one ward's scenario: give a ward's file, or use run, compare, size or check"
        )

    scenario = load_scenario(scenario_path)
    return scenario, load_history(scenario)


def output_target(out: Path | None, scenario, command: str) -> Path:
    from planner.outputs import default_folder

    return out if out is not None else default_folder(scenario.name, command)


def worker_count(jobs: int | None) -> int:
    """Worker processes: as asked, else one per core."""
    return jobs if jobs is not None else max(1, os.cpu_count() or 1)


def run_options(paths, seed, engine, jobs, scheduler, label: str = "simulating"):
    """The run options of a command: its --paths, --seed, --engine, --jobs and --scheduler,
    with a progress bar when stderr is a terminal."""
    from planner.simulate.engines import engine_problem
    from planner.simulate.model import RunOptions

    problem = engine_problem(engine or "auto")
    if problem is not None:
        click.echo(problem, err=True)
    return RunOptions(paths, seed, engine, worker_count(jobs), scheduler, progress_bar(label))


def run_plan(plan, history, options):
    """Forecast, simulate and summarise ``plan`` (its ``history`` read already)."""
    from planner.runs.run import run_scenario

    if sys.stderr.isatty():
        click.echo(f"{plan.name}: forecasting admissions (fit, backtest, sample paths)", err=True)
    return run_scenario(plan, options, history=history)


def progress_bar(label: str):
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

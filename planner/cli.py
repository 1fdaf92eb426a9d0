"""Command-line interface: thin commands that parse options, call one library function and
print or write its result. Every user error is one line on stderr and exit status 2."""

from __future__ import annotations

import functools
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


scenario_argument = click.argument(
    "scenario", required=False, type=click.Path(dir_okay=False, path_type=Path)
)
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
seed_option = click.option(
    "--seed",
    type=click.IntRange(min=0),
    default=None,
    help="Random seed (default: the scenario's).",
)


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


def main() -> None:
    """Console-script entry point."""
    cli(prog_name="planner")

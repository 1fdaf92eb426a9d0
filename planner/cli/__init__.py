"""Command-line interface: thin commands that parse options, call one library function and
print or write its result. Every user error is one line on stderr and exit status 2."""

from planner.cli import forecasting, planning  # noqa: F401  (registers the commands)
from planner.cli.base import cli, main

__all__ = ["cli", "main"]

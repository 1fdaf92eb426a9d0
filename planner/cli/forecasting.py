"""Commands that check a scenario and forecast admissions: check, forecast, backtest."""

from __future__ import annotations

from pathlib import Path

import click

from planner.cli.base import (
    load_plan,
    output_options,
    output_target,
    scenario_argument,
    user_errors,
)


@click.command()
@scenario_argument
@user_errors
def check(scenario: Path | None) -> None:
    """Validate a scenario file (or a hospital file and each of its wards) and its input files
    without running anything."""
    from planner.runs.run import check_scenario
    from planner.scenario_hospital import is_hospital_file

    if is_hospital_file(scenario):
        from planner.cli.hospital import check_hospital_file

        for line in check_hospital_file(scenario):
            click.echo(line)
        return
    for line in check_scenario(scenario):
        click.echo(line)


@click.command()
@scenario_argument
@output_options
@user_errors
def forecast(scenario: Path | None, out, overwrite, paths, seed) -> None:
    """Forecast daily admissions as sample paths: forecast.csv and a fan chart."""
    from planner.outputs import atomic_folder
    from planner.report.charts import admissions_fan
    from planner.report.files import write_csv
    from planner.runs.run import forecast_step

    plan, history = load_plan(scenario)
    target = output_target(out, plan, "forecast")
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
    if summary.drift is not None:
        click.echo(summary.drift.message())
    click.echo(f"wrote {target}/forecast.csv and admissions.png")


@click.command()
@scenario_argument
@output_options
@user_errors
def backtest(scenario: Path | None, out, overwrite, paths, seed) -> None:
    """Rolling-origin backtest of the forecast strategies: backtest.csv."""
    from planner.outputs import atomic_folder
    from planner.report.files import write_csv
    from planner.runs.run import backtest_step

    plan, history = load_plan(scenario)
    target = output_target(out, plan, "backtest")
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
    if result.from_cache:
        from planner.report.html import CACHED_BACKTEST

        click.echo(CACHED_BACKTEST)
    click.echo(f"wrote {target}/backtest.csv")

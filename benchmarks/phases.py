"""Where the time of one `planner run` goes, measured in a fresh process.

`python benchmarks/phases.py [--cached] [--paths N]` does what `planner run` on the demo does,
calling the same library functions in the same order as the command (planner/cli/planning.py),
and prints one JSON object: seconds per phase. The backtest is timed inside the forecast step
(the forecast's call to the backtest cache is wrapped), so "forecast paths" is the forecast
step without it. Without --cached the backtest cache is a new empty folder; with it, the
folder of $PLANNER_CACHE (run once before to fill it). Interpreter start and exit are not in
it: `benchmarks/run.py` gives the wall time of the command itself beside it.
"""

from __future__ import annotations

import time

CLOCK = time.perf_counter()

import argparse  # noqa: E402
import gc  # noqa: E402
import json  # noqa: E402
import os  # noqa: E402
import sys  # noqa: E402
import tempfile  # noqa: E402
from pathlib import Path  # noqa: E402

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--cached", action="store_true")
    parser.add_argument("--paths", type=int, default=None)
    arguments = parser.parse_args()
    if not arguments.cached:
        empty = tempfile.TemporaryDirectory(prefix="planner-cache-")
        os.environ["PLANNER_CACHE"] = empty.name
    seconds: dict[str, float] = {}
    clock = CLOCK

    def lap(name: str) -> None:
        nonlocal clock
        now = time.perf_counter()
        seconds[name] = seconds.get(name, 0.0) + now - clock
        clock = now

    # As planner.cli.main and the run command: process settings, then the command's imports.
    from planner import cli

    for name in cli.BLAS_THREAD_VARIABLES:
        os.environ.setdefault(name, "1")
    cli.keep_freed_memory()
    gc.set_threshold(cli.GC_THRESHOLD)
    # What the run's steps import when they are first called.
    import planner.forecast.pipeline as pipeline
    import planner.simulate.arrivals
    import planner.simulate.engines
    import planner.simulate.stay_fit  # noqa: F401
    from planner.cli.base import run_options
    from planner.outputs import DEFAULT_ROOT, atomic_folder
    from planner.report import charts
    from planner.report.run_report import write_run_files
    from planner.results import RunResult
    from planner.runs import run as runs
    from planner.runs.hindcast import latest_hindcast
    from planner.scenario import load_scenario

    lap("imports")
    plan = load_scenario(None)
    history = runs.load_history(plan)
    lap("history")
    options = run_options(arguments.paths, None, None, None, None).with_defaults(
        plan.paths, plan.seed, plan.engine
    )
    backtest = pipeline.cached_backtest

    def timed_backtest(*args, **kwargs):
        nonlocal clock
        lap("forecast paths")
        result = backtest(*args, **kwargs)
        lap("backtest")
        return result

    pipeline.cached_backtest = timed_backtest
    forecast = runs.forecast_step(plan, history, options.paths, options.seed)
    lap("forecast paths")
    model = runs.ward_model(plan, history)
    ward = runs.simulate_step(model, forecast.paths, options)
    lap("simulation")
    weekly = runs.weekly_paths(ward, history.start)
    summary = runs.summarise_run(ward, weekly, history)
    lap("summaries")
    for name in (
        "admissions_fan",
        "census_fan",
        "shortfall_probabilities",
        "nurses_against_roster",
    ):
        setattr(charts, name, _timed(getattr(charts, name), seconds))
    run = RunResult(
        plan, history, forecast, model, ward, weekly, summary, options.paths, options.seed, {}
    )
    with tempfile.TemporaryDirectory() as folder:
        target = Path(folder) / "run"
        with atomic_folder(target, False) as written:
            hindcast = latest_hindcast([DEFAULT_ROOT, target.parent], plan)
            write_run_files(run, written, hindcast)
        lap("charts and files")
    seconds["files"] = seconds.pop("charts and files") - seconds["charts"]
    if not arguments.cached:
        empty.cleanup()
    gc.freeze()
    print(json.dumps({key: round(value, 4) for key, value in seconds.items()}))


def _timed(function, seconds: dict[str, float]):
    def wrapper(*args, **kwargs):
        clock = time.perf_counter()
        try:
            return function(*args, **kwargs)
        finally:
            seconds["charts"] = seconds.get("charts", 0.0) + time.perf_counter() - clock

    return wrapper


if __name__ == "__main__":
    main()

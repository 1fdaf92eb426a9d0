"""All benchmarks in one process run: `python benchmarks/run.py` (from the project folder).

Prints tables of timings with ratios against a reference measured in the same run:
forecast fit and paths against one plain statsmodels AutoReg fit; simulation throughput
against a minimal SimPy loop of the same ward model written in benchmarks/engines.py; the
whole `planner run` on the demo; scaling in paths; peak memory of a large run.

Speed is measured here, never as a timed assertion in the test suite. Absolute numbers
depend on the machine and its load; the ratios are what to compare.
"""

from __future__ import annotations

import multiprocessing
import resource
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))
sys.path.insert(0, str(HERE.parent))

import engines  # noqa: E402
import forecast  # noqa: E402

from planner.allocator import keep_freed_memory  # noqa: E402


def end_to_end(paths: int | None, engine: str, jobs: int) -> float:
    """Seconds for `planner run` on the bundled demo (files written to a temporary folder)."""
    from click.testing import CliRunner

    from planner.cli import cli

    arguments = ["run", "--engine", engine, "--jobs", str(jobs)]
    if paths is not None:
        arguments += ["--paths", str(paths)]
    with tempfile.TemporaryDirectory() as folder:
        clock = time.perf_counter()
        result = CliRunner().invoke(cli, [*arguments, "--out", str(Path(folder) / "run")])
        seconds = time.perf_counter() - clock
    if result.exit_code != 0:
        raise RuntimeError(result.output)
    return seconds


def _peak_memory_child(paths: int, weeks: int, queue) -> None:
    from dataclasses import replace

    from planner.allocator import keep_freed_memory
    from planner.runs.run import run_scenario
    from planner.scenario import load_scenario

    keep_freed_memory()  # as the command line does

    scenario = replace(load_scenario(), horizon_weeks=weeks)
    run_scenario(scenario, paths, engine="fast", jobs=1)
    queue.put(resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024)


def peak_memory_mb(paths: int, weeks: int) -> float:
    """Peak resident memory (MB) of a fresh process running the demo with the fast engine."""
    context = multiprocessing.get_context("spawn")
    queue = context.Queue()
    child = context.Process(target=_peak_memory_child, args=(paths, weeks, queue))
    child.start()
    value = queue.get()
    child.join()
    return value


def main() -> None:
    keep_freed_memory()  # as the command line does
    print("Forecast (3 years of daily history, horizon 91 days)")
    print(f"{'case':52} {'seconds':>9} {'x reference':>12}")
    for case, seconds, _, ratio in forecast.rows():
        print(f"{case:52} {seconds:9.3f} {ratio:12.1f}")
    print()
    engines.main()
    print()
    print("End to end: planner run on the demo (13 weeks), 2 cores")
    reference = end_to_end(None, "simpy", 1)
    rows = [("1,000 paths, simpy engine, 1 job (reference)", reference)]
    rows.append(("1,000 paths, fast engine, 1 job", end_to_end(None, "fast", 1)))
    for paths in (1_000, 4_000, 16_000):
        rows.append((f"{paths:,} paths, fast engine, 2 jobs", end_to_end(paths, "fast", 2)))
    rows.append(("10,000 paths, fast engine, 2 jobs", end_to_end(10_000, "fast", 2)))
    print(f"{'case':52} {'seconds':>9} {'x reference':>12}")
    for case, seconds in rows:
        print(f"{case:52} {seconds:9.2f} {seconds / reference:12.2f}")
    print()
    print(f"peak memory, 10,000 paths x 26 weeks, fast engine: {peak_memory_mb(10_000, 26):.0f} MB")


if __name__ == "__main__":
    main()

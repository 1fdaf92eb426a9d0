"""All benchmarks in one process run: `python benchmarks/run.py [SECTION ...]` (from the project
folder; sections: forecast, engines, commands, phases, memory, hospital; default all).

Prints tables of timings with ratios against a reference measured in the same run:
forecast fit and paths against one plain statsmodels AutoReg fit, and the direct strategy's
regressions solved together against one fit per horizon; simulation throughput against a
minimal SimPy loop of the same ward model written in benchmarks/engines.py; commands on the
demo as a user runs them (each a fresh `python -m planner` process, best of 3) against a fresh
interpreter importing numpy and pandas; where the time of one `planner run` goes
(benchmarks/phases.py, in a fresh process); peak memory of a large run.

The backtest cache (planner.forecast.backtest_cache) is a temporary folder here: emptied before
each "uncached" command, filled once before the "cached" ones; the user's is never touched.

Speed is measured here, never as a timed assertion in the test suite. Absolute numbers
depend on the machine and its load; the ratios are what to compare.
"""

from __future__ import annotations

import json
import multiprocessing
import os
import resource
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
sys.path.insert(0, str(HERE))
sys.path.insert(0, str(ROOT))

from planner.allocator import keep_freed_memory  # noqa: E402

DEMO_PLANS = [
    f"scenarios/{name}.toml"
    for name in ("baseline", "winter_escalation", "shorter_stays", "weekend_roster")
]
REPEATS = 3


def fresh_process(arguments: list[str], environment: dict[str, str]) -> float:
    """Wall seconds of one fresh process, as the shell sees it (start and exit included)."""
    clock = time.perf_counter()
    done = subprocess.run(
        [sys.executable, *arguments], cwd=ROOT, env=environment, capture_output=True, text=True
    )
    seconds = time.perf_counter() - clock
    if done.returncode != 0:
        raise RuntimeError(f"{arguments}: {done.stderr}")
    return seconds


def best(arguments: list[str], environment: dict[str, str], before=None) -> float:
    times = []
    for _ in range(REPEATS):
        if before is not None:
            before()
        times.append(fresh_process(arguments, environment))
    return min(times)


def commands() -> None:
    cache = Path(tempfile.mkdtemp(prefix="planner-cache-"))
    out = Path(tempfile.mkdtemp(prefix="planner-out-"))
    environment = {**os.environ, "PLANNER_CACHE": str(cache)}

    def empty_cache() -> None:
        shutil.rmtree(cache, ignore_errors=True)

    def planner(*arguments: str) -> list[str]:
        return ["-m", "planner", *arguments]

    run = planner("run", "--out", str(out / "run"), "--overwrite")
    compare = planner("compare", *DEMO_PLANS, "--out", str(out / "compare"), "--overwrite")
    size = planner("size", "--paths", "2000", "--out", str(out / "size"), "--overwrite")
    reference = best(["-c", "import numpy, pandas"], environment)
    rows = [
        ("python -c 'import numpy, pandas' (reference)", reference),
        ("planner --help", best(planner("--help"), environment)),
        ("planner check", best(planner("check"), environment)),
        ("planner run, backtest not cached", best(run, environment, empty_cache)),
        ("planner run, backtest cached", best(run, environment)),
        ("planner run --paths 10000, cached", best([*run, "--paths", "10000"], environment)),
        ("planner compare (4 demo plans), not cached", best(compare, environment, empty_cache)),
        ("planner compare (4 demo plans), cached", best(compare, environment)),
        ("planner size --paths 2000, cached", best(size, environment)),
    ]
    numba_cache = tempfile.mkdtemp(prefix="numba-cache-")
    first = fresh_process(run, {**environment, "NUMBA_CACHE_DIR": numba_cache})
    rows.append(("planner run, cached, numba's cache empty (once)", first))
    shutil.rmtree(numba_cache, ignore_errors=True)
    print("Commands on the demo, each a fresh process (best of 3 unless said)")
    print(f"{'command':52} {'seconds':>9} {'x reference':>12}")
    for case, seconds in rows:
        print(f"{case:52} {seconds:9.2f} {seconds / reference:12.1f}")
    shutil.rmtree(cache, ignore_errors=True)
    shutil.rmtree(out, ignore_errors=True)


def phases() -> None:
    """Where the time of one `planner run` goes (benchmarks/phases.py in fresh processes; of
    three, the run with the smallest total), uncached and cached backtest."""
    cache = Path(tempfile.mkdtemp(prefix="planner-cache-"))
    environment = {**os.environ, "PLANNER_CACHE": str(cache)}
    columns = {}
    for label, flags in (("not cached", []), ("cached", ["--cached"])):
        runs = []
        for _ in range(REPEATS + bool(flags)):  # the first cached run fills the cache
            done = subprocess.run(
                [sys.executable, str(HERE / "phases.py"), *flags],
                cwd=ROOT,
                env=environment,
                capture_output=True,
                text=True,
                check=True,
            )
            runs.append(json.loads(done.stdout.strip().splitlines()[-1]))
        runs = runs[-REPEATS:]
        columns[label] = min(runs, key=lambda seconds: sum(seconds.values()))
    shutil.rmtree(cache, ignore_errors=True)
    names = list(columns["not cached"])
    totals = {label: sum(seconds.values()) for label, seconds in columns.items()}
    print("Where the time of one `planner run` goes (fresh process; start and exit not included)")
    print(f"{'phase':20} {'not cached s':>13} {'share':>7} {'cached s':>10} {'share':>7}")
    for name in [*names, "all"]:
        values = []
        for label in columns:
            seconds = totals[label] if name == "all" else columns[label][name]
            values += [seconds, seconds / totals[label]]
        print(f"{name:20} {values[0]:13.3f} {values[1]:7.0%} {values[2]:10.3f} {values[3]:7.0%}")


def _peak_memory_child(paths: int, weeks: int, queue) -> None:
    from dataclasses import replace

    from planner.allocator import keep_freed_memory
    from planner.runs.run import run_scenario
    from planner.scenario import load_scenario
    from planner.simulate.model import RunOptions

    keep_freed_memory()  # as the command line does
    os.environ["PLANNER_CACHE"] = ""  # no cache: the backtest runs as in a first run
    scenario = replace(load_scenario(), horizon_weeks=weeks)
    run_scenario(scenario, RunOptions(paths=paths, engine="fast", jobs=1))
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


def forecast_section() -> None:
    import forecast

    print("Forecast (3 years of daily history, horizon 91 days)")
    print(f"{'case':52} {'seconds':>9} {'x reference':>12}")
    for case, seconds, _, ratio in forecast.rows():
        print(f"{case:52} {seconds:9.3f} {ratio:12.1f}")
    print()
    print("Direct strategy's 91 regressions (3 years, calendar terms)")
    print(f"{'case':52} {'seconds':>9} {'x reference':>12}")
    for case, seconds, ratio in forecast.direct_rows():
        print(f"{case:52} {seconds:9.4f} {ratio:12.2f}")


def engines_section() -> None:
    import engines

    engines.main()


def memory() -> None:
    print(f"peak memory, 10,000 paths x 26 weeks, fast engine: {peak_memory_mb(10_000, 26):.0f} MB")


def hospital_section() -> None:
    import hospital

    hospital.main([])  # its defaults: 10,000 paths


SECTIONS = {
    "forecast": forecast_section,
    "engines": engines_section,
    "commands": commands,
    "phases": phases,
    "memory": memory,
    "hospital": hospital_section,
}


def main() -> None:
    keep_freed_memory()  # as the command line does
    chosen = sys.argv[1:] or list(SECTIONS)
    unknown = [name for name in chosen if name not in SECTIONS]
    if unknown:
        raise SystemExit(f"unknown section(s) {unknown}; choose from {list(SECTIONS)}")
    for number, name in enumerate(chosen):
        if number:
            print()
        SECTIONS[name]()


if __name__ == "__main__":
    main()

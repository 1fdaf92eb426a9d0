"""Patients per second of the ward engines, in one process, as ratios to a reference run.

Run from the repository root: ``PYTHONPATH=. python benchmarks/engines.py``. Numpy's own
threads do not matter here (no linear algebra); set OPENBLAS_NUM_THREADS=1 to rule them out.

Wards: the demo ward is the bundled demo's (``scenarios/baseline.toml``): its beds, staffing
and policy, its recorded stays (Kaplan-Meier) and current inpatients, with Poisson arrivals at
its mean rate; the 30- and 300-bed wards are synthetic (lognormal stays, 85% occupancy).

Rows:
- reference: a minimal SimPy loop of the same ward ("wait" policy), one process per patient
  queuing for a ``simpy.Resource``, written here;
- simpy model: :func:`planner.simulate.ward.simulate_ward`;
- fast, spawned / counter: :func:`planner.simulate.fast.simulate_ward_fast` with the SimPy
  model's random streams (same results) or the counter-based streams;
- fast, jobs=1 / jobs=2: :func:`planner.simulate.engines.simulate` with the default streams;
- fast + summaries: the fast engine, then the weekly, daily and shift summaries read from the
  result's arrays (what ``planner run`` does after the forecast).

The rows above are the best of three calls in one process: the first call pays for the first
touch of its memory and, with jobs=2, for starting the worker (kept for the session after
that). A command such as ``planner run`` simulates once, so the table "first run in a new
process" times that call alone, each time in a fresh Python process (best of three processes).

Like the command line, the script asks the C allocator to keep freed memory
(:func:`planner.allocator.keep_freed_memory`).

Last, the peak memory (tracemalloc) of the fast engine for 10,000 paths x 182 days.
"""

from __future__ import annotations

import functools
import os
import subprocess
import sys
import time
import tracemalloc
from datetime import date

import numpy as np
import simpy

from planner.allocator import keep_freed_memory
from planner.runs.run import load_history, ward_inputs
from planner.scenario import load_scenario
from planner.simulate.engines import simulate
from planner.simulate.fast import (
    BLOCK_PATHS,
    arrival_rows,
    by_slot,
    simpy_clock,
    simulate_ward_fast,
)
from planner.simulate.fast_beds import allocate_beds
from planner.simulate.fast_records import Pieces, daily_records
from planner.simulate.fast_streams import draw_block
from planner.simulate.settings import WardSettings
from planner.simulate.stays import Lognormal
from planner.simulate.ward import beds_open_by_day, simulate_ward
from planner.summaries.daily import summarise_daily, summarise_shifts
from planner.summaries.weekly import weekly_paths

START = date(2024, 1, 1)
DAYS = 91
MEAN_STAY, SD_STAY = 5.0, 4.4  # days
OCCUPANCY = 0.85  # for the 30 and 300 bed wards: rate = occupancy x beds / mean stay
UNIFORM = np.full(24, 1 / 24)
SEED = 2024


def reference_loop(arrivals, beds, stays, seed):
    """Minimal SimPy ward: each patient a process requesting one of ``beds`` (FCFS)."""
    for i, counts in enumerate(arrivals):
        rng = np.random.default_rng([seed, i])
        total = int(counts.sum())
        hours = np.sort(24.0 * np.repeat(np.arange(counts.size), counts) + 24 * rng.random(total))
        stay_hours = 24.0 * stays.sample(rng, total)
        env = simpy.Environment()
        ward = simpy.Resource(env, capacity=beds)

        def patient(env, ward, arrive, stay):
            yield env.timeout(arrive)
            with ward.request() as bed:
                yield bed
                yield env.timeout(stay)

        for arrive, stay in zip(hours.tolist(), stay_hours.tolist(), strict=True):
            env.process(patient(env, ward, arrive, stay))
        env.run(until=24.0 * counts.size)


def timed(function, *arguments, repeats: int = 3, **keywords) -> float:
    """Best of ``repeats`` runs, seconds (the machine's other work adds noise)."""
    best = float("inf")
    for _ in range(repeats):
        clock = time.perf_counter()
        function(*arguments, **keywords)
        best = min(best, time.perf_counter() - clock)
    return best


def with_summaries(arrivals, *arguments):
    result = simulate_ward_fast(arrivals, *arguments)
    weekly_paths(result, arguments[0])
    summarise_daily(result)
    summarise_shifts(result)


def synthetic_inputs(beds: int, paths: int):
    """A ward of ``beds`` beds at ``OCCUPANCY``: Poisson arrivals, lognormal stays, current
    inpatients with exponential elapsed stays, arrivals spread evenly over the day."""
    rate = OCCUPANCY * beds / MEAN_STAY
    arrivals = np.random.default_rng(SEED).poisson(rate, size=(paths, DAYS))
    elapsed = np.random.default_rng(SEED + 1).exponential(MEAN_STAY, round(OCCUPANCY * beds))
    stays = Lognormal.from_mean_sd(MEAN_STAY, SD_STAY)
    return arrivals, (START, WardSettings(beds=beds), stays, elapsed, UNIFORM, SEED)


def ward_case(arrivals, arguments, simpy_paths):
    """Rows (name, paths, patients/s) for one ward (``arguments``: those of the engines after
    the arrivals)."""
    paths = arrivals.shape[0]
    beds, stays = arguments[1].beds, arguments[2]
    rows = []
    if simpy_paths:
        few = arrivals[:simpy_paths]
        patients = few.sum()
        rows.append(("reference simpy loop", simpy_paths,
                     patients / timed(reference_loop, few, beds, stays, SEED)))  # fmt: skip
        rows.append(("simpy model", simpy_paths,
                     patients / timed(simulate_ward, few, *arguments)))  # fmt: skip
    patients = arrivals.sum()
    for streams in ("spawned", "counter"):
        seconds = timed(simulate_ward_fast, arrivals, *arguments, streams=streams)
        rows.append((f"fast, {streams} streams", paths, patients / seconds))
    # Alternated, best of five each, so that a change in the machine's load hits both.
    seconds = {1: float("inf"), 2: float("inf")}
    for _ in range(5):
        for jobs in seconds:
            seconds[jobs] = min(seconds[jobs], timed(simulate, arrivals, *arguments, engine="fast",
                                                     jobs=jobs, repeats=1))  # fmt: skip
    rows += [(f"fast, jobs={jobs}", paths, patients / value) for jobs, value in seconds.items()]
    rows.append(("fast + summaries", paths, patients / timed(with_summaries, arrivals, *arguments)))
    return rows


def peak_memory(paths: int, days: int) -> float:
    """Peak memory (GB) traced while the fast engine simulates the demo ward."""
    arrivals, arguments = demo_inputs(paths, days)
    tracemalloc.start()
    simulate_ward_fast(arrivals, *arguments)
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    return peak / 1e9


@functools.cache
def _demo_ward():
    """The bundled demo (scenarios/baseline.toml): ward settings, its recorded stays
    (Kaplan-Meier), current inpatients, hour-of-day profile, first day and mean admissions per
    day over the last year of its history."""
    scenario = load_scenario()
    history = load_history(scenario)
    inputs = ward_inputs(scenario, history)
    rate = float(history.admissions.iloc[-365:].mean())
    return scenario.ward, inputs, history.first_day.date(), rate


def demo_inputs(paths: int, days: int = DAYS):
    """Arrivals (Poisson at the demo's mean rate) and the other arguments of the engines for
    the demo ward: its beds, staffing and policy, recorded stays and current inpatients."""
    ward, inputs, start, rate = _demo_ward()
    arrivals = np.random.default_rng(SEED).poisson(rate, size=(paths, days))
    arguments = (start, ward, inputs.stays, inputs.inpatients_elapsed, inputs.hour_profile, SEED)
    return arrivals, arguments


def first_call(jobs: int, paths: int) -> None:
    """Print the seconds of one fast-engine call (run in a fresh process by ``first_run``)."""
    arrivals, arguments = demo_inputs(paths)
    clock = time.perf_counter()
    simulate(arrivals, *arguments, engine="fast", jobs=jobs)
    print(time.perf_counter() - clock)


def first_run(jobs: int, paths: int) -> float:
    """Best of three fresh processes: seconds of the first fast-engine call in each."""
    command = [sys.executable, __file__, "--first-call", str(jobs), str(paths)]
    root = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
    path = os.pathsep.join(filter(None, [root, os.environ.get("PYTHONPATH")]))
    environment = {**os.environ, "PYTHONPATH": path}
    times = [
        float(subprocess.run(command, check=True, capture_output=True, text=True,
                             env=environment).stdout)
        for _ in range(3)
    ]  # fmt: skip
    return min(times)


def print_first_runs(paths: int) -> None:
    patients = demo_inputs(paths)[0].sum()
    seconds = {jobs: first_run(jobs, paths) for jobs in (1, 2)}
    print(f"\ndemo ward, {paths:,} paths, first run in a new process (as planner run makes it)")
    print(f"{'engine':28s} {'paths':>7s} {'patients/s':>12s}")
    for jobs, value in seconds.items():
        print(f"{f'fast, jobs={jobs}':28s} {paths:7d} {patients / value:12,.0f}")
    print(f"jobs=2 speed-up over jobs=1: {seconds[1] / seconds[2]:.2f}x")


def _layout(rows, stay_days):
    return by_slot(rows), by_slot(stay_days, 24.0)


def phases(paths: int = BLOCK_PATHS) -> list[tuple[str, float]]:
    """Nanoseconds per patient of each step of one fast-engine block of the demo ward (best of
    three): the random draws, arrival times, the (slots x paths) layout, the SimPy clock, the
    bed allocation loop, the daily and shift records."""
    arrivals, (start, ward, stays, elapsed, profile, seed) = demo_inputs(paths)
    counts = arrivals.astype(np.int64)
    totals = counts.sum(axis=1)
    order = np.argsort(-totals, kind="stable")
    beds = beds_open_by_day(ward, start, DAYS)
    starts = np.sort([shift.start_hour for shift in ward.staffing.shifts])
    best: dict[str, float] = {}

    def step(name, function, *arguments, **keywords):
        clock = time.perf_counter()
        value = function(*arguments, **keywords)
        best[name] = min(best.get(name, float("inf")), time.perf_counter() - clock)
        return value

    for _ in range(3):
        draws = step("random draws", draw_block, "spawned", seed, 0, totals, order, stays, elapsed)
        rows = step("arrival times", arrival_rows, draws.hour_uniforms, draws.within_uniforms,
                    counts[order], profile)  # fmt: skip
        arrival, stay = step("layout (slots x paths)", _layout, rows, draws.stay_days)
        clock = step("SimPy clock", simpy_clock, arrival)
        remaining = 24.0 * draws.remaining_days
        times = step("bed allocation", allocate_beds, arrival, clock, stay, totals[order],
                     remaining[order], beds, wait=True)  # fmt: skip
        step("daily and shift records", daily_records, times, arrival, order, counts, remaining,
             Pieces(DAYS, starts))  # fmt: skip
    patients = int(totals.sum())
    return [(name, 1e9 * seconds / patients) for name, seconds in best.items()]


def print_phases() -> None:
    rows = phases()
    print(f"\nfast engine, one block of {BLOCK_PATHS:,} demo paths: time per patient by step")
    print(f"{'step':28s} {'ns/patient':>11s}")
    for name, nanoseconds in rows:
        print(f"{name:28s} {nanoseconds:11.1f}")
    total = sum(value for _, value in rows)
    print(f"{'all':28s} {total:11.1f}   ({1e9 / total:,.0f} patients/s on one core)")


def print_table(title, rows):
    base = dict((name, rate) for name, _, rate in rows)
    reference = base.get("reference simpy loop")
    model = base.get("simpy model")
    print(f"\n{title}")
    print(f"{'engine':28s} {'paths':>7s} {'patients/s':>12s} {'x reference':>12s} {'x model':>9s}")
    for name, paths, rate in rows:
        ratio_reference = f"{rate / reference:12.1f}" if reference else f"{'':12s}"
        ratio_model = f"{rate / model:9.1f}" if model else f"{'':9s}"
        print(f"{name:28s} {paths:7d} {rate:12,.0f} {ratio_reference} {ratio_model}")
    one, two = base["fast, jobs=1"], base["fast, jobs=2"]
    print(f"jobs=2 speed-up over jobs=1: {two / one:.2f}x")


def main():
    ward, inputs, _, rate = _demo_ward()
    stays, inpatients = inputs.stays.describe(), inputs.inpatients_elapsed.size
    print(f"demo ward: {ward.beds} beds, {rate:.1f} admissions/day (Poisson), recorded stays "
          f"({stays}), {inpatients} current inpatients")  # fmt: skip
    print_table(f"demo ward, {DAYS} days, 1,000 paths", ward_case(*demo_inputs(1000), 1000))
    print_table(f"demo ward, {DAYS} days, 10,000 paths (fast only)",
                ward_case(*demo_inputs(10_000), 0))  # fmt: skip
    for beds, paths, simpy_paths in ((30, 1000, 300), (300, 300, 30)):
        rate = OCCUPANCY * beds / MEAN_STAY
        title = f"{beds} beds, {rate:.1f}/day (occupancy ~{OCCUPANCY:.0%}), lognormal stays"
        print_table(f"{title}, {DAYS} days", ward_case(*synthetic_inputs(beds, paths), simpy_paths))
    print_first_runs(10_000)
    print_phases()
    print(f"\npeak memory, fast engine, 10,000 paths x 182 days: {peak_memory(10_000, 182):.2f} GB")


if __name__ == "__main__":
    keep_freed_memory()  # as the command line does
    if sys.argv[1:2] == ["--first-call"]:
        first_call(int(sys.argv[2]), int(sys.argv[3]))
    else:
        main()

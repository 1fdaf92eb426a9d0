"""Patients per second of the ward engines, in one process, as ratios to a reference run.

Run from the repository root: ``PYTHONPATH=. python benchmarks/engines.py``. Numpy's own
threads do not matter here (no linear algebra); set OPENBLAS_NUM_THREADS=1 to rule them out.

Wards: the demo ward is the bundled demo's (``scenarios/baseline.toml``): its beds, staffing
and policy, its recorded stays (Kaplan-Meier), its calendar discharge timing and current
inpatients, with Poisson arrivals at its mean rate (also run with stays as durations); the
30- and 300-bed wards are synthetic (lognormal stays, 85% occupancy), and an overloaded
300-bed ward (150 admissions a day, mean stay 1.8 days) is run end to end.

Rows:
- reference: a minimal SimPy loop of the same ward ("wait" policy), one process per patient
  queuing for a ``simpy.Resource``, written here;
- simpy model: :func:`planner.simulate.ward.simulate_ward`;
- fast: :func:`planner.simulate.fast.simulate_ward_fast` (the compiled loop, random draws
  included; compiled once before timing, as the on-disk cache makes it for a user);
- fast, jobs=1 / jobs=2: :func:`planner.simulate.engines.simulate` in one or two processes;
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
from dataclasses import replace
from datetime import date

import numpy as np
import simpy

from planner.allocator import keep_freed_memory
from planner.runs.run import load_history
from planner.runs.ward_model import ward_model
from planner.scenario import load_scenario
from planner.simulate import fast, sampling
from planner.simulate.discharge_fit import describe_discharges
from planner.simulate.engines import simulate
from planner.simulate.model import RunOptions, WardModel
from planner.simulate.settings import WardSettings
from planner.simulate.stays import Lognormal
from planner.simulate.ward import simulate_ward
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


def with_summaries(arrivals, model, seed):
    result = fast.simulate_ward_fast(arrivals, model, seed)
    weekly_paths(result, model.start)
    summarise_daily(result)
    summarise_shifts(result)


def synthetic_inputs(beds: int, paths: int, rate: float | None = None, mean: float = MEAN_STAY):
    """A ward of ``beds`` beds at ``OCCUPANCY`` (or ``rate`` admissions a day): Poisson
    arrivals, lognormal stays of mean ``mean`` days, patients on the ward at the start with
    exponential elapsed stays, arrivals spread evenly over the day."""
    rate = OCCUPANCY * beds / mean if rate is None else rate
    arrivals = np.random.default_rng(SEED).poisson(rate, size=(paths, DAYS))
    elapsed = np.random.default_rng(SEED + 1).exponential(mean, round(OCCUPANCY * beds))
    stays = Lognormal.from_mean_sd(mean, SD_STAY * mean / MEAN_STAY)
    return arrivals, WardModel(START, WardSettings(beds=beds), stays, elapsed, UNIFORM)


def ward_case(arrivals, model, simpy_paths):
    """Rows (name, paths, patients/s) for one ward."""
    paths = arrivals.shape[0]
    beds, stays = model.settings.beds, model.stays
    fast.simulate_ward_fast(arrivals[:2], model, SEED)  # compiled (or loaded) before timing
    rows = []
    if simpy_paths:
        few = arrivals[:simpy_paths]
        patients = few.sum()
        rows.append(("reference simpy loop", simpy_paths,
                     patients / timed(reference_loop, few, beds, stays, SEED)))  # fmt: skip
        rows.append(("simpy model", simpy_paths,
                     patients / timed(simulate_ward, few, model, SEED)))  # fmt: skip
    patients = arrivals.sum()
    rows.append(("fast", paths, patients / timed(fast.simulate_ward_fast, arrivals, model, SEED)))
    # Alternated, best of five each, so that a change in the machine's load hits both.
    seconds = {1: float("inf"), 2: float("inf")}
    for _ in range(5):
        for jobs in seconds:
            options = RunOptions(engine="fast", jobs=jobs)
            seconds[jobs] = min(seconds[jobs], timed(simulate, arrivals, model, SEED, options,
                                                     repeats=1))  # fmt: skip
    rows += [(f"fast, jobs={jobs}", paths, patients / value) for jobs, value in seconds.items()]
    rows.append(
        ("fast + summaries", paths, patients / timed(with_summaries, arrivals, model, SEED))
    )
    return rows


def peak_memory(paths: int, days: int) -> float:
    """Peak memory (GB) traced while the fast engine simulates the demo ward."""
    arrivals, model = demo_inputs(paths, days)
    fast.simulate_ward_fast(arrivals[:2], model, SEED)
    tracemalloc.start()
    fast.simulate_ward_fast(arrivals, model, SEED)
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    return peak / 1e9


@functools.cache
def _demo_ward():
    """The bundled demo (scenarios/baseline.toml): its ward model (beds, staffing, policy,
    recorded stays (Kaplan-Meier), patients on the ward, hour-of-day profile) and mean
    admissions per day over the last year of its history."""
    scenario = load_scenario()
    history = load_history(scenario)
    return ward_model(scenario, history), float(history.admissions.iloc[-365:].mean())


def demo_inputs(paths: int, days: int = DAYS):
    """Arrivals (Poisson at the demo's mean rate) and the demo's ward model."""
    model, rate = _demo_ward()
    return np.random.default_rng(SEED).poisson(rate, size=(paths, days)), model


def first_call(jobs: int, paths: int) -> None:
    """Print the seconds of one fast-engine call (run in a fresh process by ``first_run``)."""
    arrivals, model = demo_inputs(paths)
    clock = time.perf_counter()
    simulate(arrivals, model, SEED, RunOptions(engine="fast", jobs=jobs))
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


def phases(paths: int = 2048) -> list[tuple[str, float]]:
    """Nanoseconds per patient of each step of the fast engine on ``paths`` demo paths (best of
    three): each path's seed and generator and its raw draws, the arrival hours (compiled),
    the stays and remaining stays from their uniforms, the simulation loop (compiled), and
    the records made into a result (nurses required and short)."""
    arrivals, model = demo_inputs(paths)
    counts = arrivals.astype(np.int64)
    days = counts.shape[1]
    fast.simulate_ward_fast(arrivals[:2], model, SEED)
    best: dict[str, float] = {}

    def step(name, function, *arguments):
        clock = time.perf_counter()
        value = function(*arguments)
        best[name] = min(best.get(name, float("inf")), time.perf_counter() - clock)
        return value

    def seeds_and_draws():
        inpatients = model.inpatients_elapsed.size
        offsets = np.concatenate([[0], np.cumsum(counts.sum(axis=1))])
        starts = np.arange(paths + 1) * inpatients + 2 * offsets
        first_stream = np.empty(starts[-1])
        stay_u = np.empty(counts.sum())
        for i in range(paths):
            bits = np.random.PCG64(sampling.path_seed(SEED, i))
            draw = np.random.Generator(bits)
            draw.random(out=first_stream[starts[i] : starts[i + 1]])
            bits.advance(sampling.STREAM_SPACING)
            draw.random(out=stay_u[offsets[i] : offsets[i + 1]])
        return first_stream, stay_u

    for _ in range(3):
        first_stream, stay_u = step("seeds and uniforms", seeds_and_draws)
        step("arrival hours", sampling.arrival_hours, first_stream, counts, model.hour_profile,
             model.inpatients_elapsed.size)  # fmt: skip
        step("stays from uniforms", model.stays.from_uniforms, 1.0 - stay_u)
        inputs = sampling.draw_inputs(model, counts, SEED)
        step("simulation and records", fast.simulate_drawn, inputs, model, days)
    patients = int(counts.sum())
    return [(name, 1e9 * seconds / patients) for name, seconds in best.items()]


def print_phases() -> None:
    rows = phases()
    print("\nfast engine, 2,048 demo paths: time per patient by step")
    print(f"{'step':28s} {'ns/patient':>11s}")
    for name, nanoseconds in rows:
        print(f"{name:28s} {nanoseconds:11.1f}")
    total = sum(value for _, value in rows)
    print(f"{'all':28s} {total:11.1f}   ({1e9 / total:,.0f} patients/s on one core)")


def overloaded_end_to_end() -> None:
    """The overloaded 300-bed ward (150 admissions a day, mean stay 1.8 days), 10,000 paths,
    13 weeks, in a fresh process with two jobs: seconds and peak memory."""
    command = [sys.executable, __file__, "--overloaded"]
    root = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
    path = os.pathsep.join(filter(None, [root, os.environ.get("PYTHONPATH")]))
    output = subprocess.run(command, check=True, capture_output=True, text=True,
                            env={**os.environ, "PYTHONPATH": path}).stdout.split()  # fmt: skip
    seconds, gigabytes = float(output[0]), float(output[1])
    print(f"\noverloaded 300-bed ward (150/day, mean stay 1.8 d), 10,000 paths x {DAYS} days, "
          f"jobs=2, fresh process: {seconds:.1f} s, peak memory {gigabytes:.2f} GB")  # fmt: skip


def _overloaded_child() -> None:
    import resource

    clock = time.perf_counter()
    arrivals, model = synthetic_inputs(300, 10_000, rate=150.0, mean=1.8)
    result = simulate(arrivals, model, SEED, RunOptions(engine="fast", jobs=2))
    weekly_paths(result, model.start)
    summarise_daily(result)
    summarise_shifts(result)
    seconds = time.perf_counter() - clock
    children = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
    peak = max(resource.getrusage(resource.RUSAGE_SELF).ru_maxrss, children) / 1024**2
    print(seconds, peak)


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
    model, rate = _demo_ward()
    stays, inpatients = model.stays.describe(), model.inpatients_elapsed.size
    print(f"demo ward: {model.settings.beds} beds, {rate:.1f} admissions/day (Poisson), recorded "
          f"stays ({stays}), {inpatients} patients on the ward at the start, discharges: "
          f"{describe_discharges(model.discharges, model.timing_note)}")  # fmt: skip
    print_table(f"demo ward, {DAYS} days, 1,000 paths", ward_case(*demo_inputs(1000), 1000))
    print_table(f"demo ward, {DAYS} days, 10,000 paths (fast only)",
                ward_case(*demo_inputs(10_000), 0))  # fmt: skip
    arrivals, model = demo_inputs(10_000)
    print_table(f"demo ward with stays as durations (discharge.timing = continuous), {DAYS} "
                f"days, 10,000 paths (fast only)",
                ward_case(arrivals, replace(model, discharges=None), 0))  # fmt: skip
    for beds, paths, simpy_paths in ((30, 1000, 300), (300, 300, 60)):
        rate = OCCUPANCY * beds / MEAN_STAY
        title = f"{beds} beds, {rate:.1f}/day (occupancy ~{OCCUPANCY:.0%}), lognormal stays"
        print_table(f"{title}, {DAYS} days", ward_case(*synthetic_inputs(beds, paths), simpy_paths))
    print_first_runs(10_000)
    print_phases()
    overloaded_end_to_end()
    print(f"\npeak memory, fast engine, 10,000 paths x 182 days: {peak_memory(10_000, 182):.2f} GB")


if __name__ == "__main__":
    keep_freed_memory()  # as the command line does
    if sys.argv[1:2] == ["--first-call"]:
        first_call(int(sys.argv[2]), int(sys.argv[3]))
    elif sys.argv[1:2] == ["--overloaded"]:
        _overloaded_child()
    else:
        main()

"""Choosing the ward simulation engine and running chunks of paths in parallel.

Engines: "simpy" (:func:`planner.simulate.ward.simulate_ward`, one SimPy run per path),
"fast" (:func:`planner.simulate.fast.simulate_ward_fast`, numpy across paths) and "auto" (the
fast engine whenever it covers the ward set-up). With the default random streams both engines
give the same result for the same seed, so the choice changes the run time, not the numbers.

``jobs`` > 1 splits the paths into consecutive chunks run in ``jobs`` processes (this one and
``jobs - 1`` workers, started on first use and kept for the session: see
:mod:`planner.simulate.workers`), or, given a ``scheduler``, on a dask.distributed cluster
(:mod:`planner.simulate.distributed`); each chunk passes its ``first_path``, so every path
draws its own streams and the result, the chunks' arrays joined along the path axis, is
identical to ``jobs = 1``. The processes write their chunks' measures straight into result
arrays in shared memory, so no result is pickled and nothing is joined afterwards.
"""

from __future__ import annotations

from collections.abc import Callable
from concurrent.futures.process import BrokenProcessPool
from dataclasses import replace
from datetime import date
from typing import TYPE_CHECKING

import numpy as np

from planner.errors import PlannerError
from planner.simulate import workers
from planner.simulate.fast import simulate_ward_fast
from planner.simulate.result import PATH_DAILY, PATH_SHIFTS, WardResult
from planner.simulate.settings import WardSettings
from planner.simulate.ward import POLICIES, simulate_ward

if TYPE_CHECKING:
    from planner.simulate.stays import StayDistribution

ENGINES = ("auto", "simpy", "fast")


def covers(ward: WardSettings) -> bool:
    """Whether the fast engine simulates this ward set-up: both policies, dated bed changes,
    current inpatients and staffing are all covered, so any valid policy is."""
    return ward.policy in POLICIES


def chosen_engine(engine: str, ward: WardSettings) -> str:
    """The engine that runs: "simpy" or "fast" ("auto" picks fast when it covers the ward)."""
    if engine not in ENGINES:
        raise PlannerError(f"engine must be one of {ENGINES}, got {engine!r}")
    if engine == "auto":
        return "fast" if covers(ward) else "simpy"
    return engine


def chunk_starts(paths: int, jobs: int) -> list[int]:
    """First path of each of at most ``jobs`` consecutive chunks of nearly equal size."""
    if int(jobs) != jobs or jobs < 1:
        raise PlannerError(f"jobs must be a whole number >= 1, got {jobs!r}")
    chunks = max(min(int(jobs), paths), 1)
    return sorted({paths * i // chunks for i in range(chunks)})


def _run(engine, arrivals, start, ward, stays, elapsed, profile, seed, first_path, streams):
    if engine == "simpy":
        return simulate_ward(
            arrivals, start, ward, stays, elapsed, profile, seed, first_path=first_path
        )
    return simulate_ward_fast(
        arrivals, start, ward, stays, elapsed, profile, seed, first_path=first_path,
        streams=streams,
    )  # fmt: skip


def _store(result: WardResult, lo: int, output: dict[str, np.ndarray]) -> None:
    """Copy the per-path measures of the chunk starting at path ``lo`` into ``output``."""
    for name, values in output.items():
        values[lo : lo + result.paths] = getattr(result, name)


def _run_into_shared(path: str, layout: dict, lo: int, arguments: tuple) -> None:
    """In a worker: run one chunk and write its measures into the shared arrays."""
    result = _run(*arguments)
    workers.write_shared(path, layout, lo, {name: getattr(result, name) for name in layout})


def chunk_bounds(paths: int, jobs: int, chunk: int | None) -> list[tuple[int, int]]:
    """Consecutive (first, end) paths of each chunk: ``jobs`` chunks of nearly equal size, or,
    given ``chunk``, chunks of at most ``chunk`` paths, as many as a multiple of ``jobs`` so
    that the workers get equal shares."""
    if chunk is not None and (int(chunk) != chunk or chunk < 1):
        raise PlannerError(f"chunk must be a whole number >= 1, got {chunk!r}")
    firsts = chunk_starts(paths, jobs)
    if chunk is not None:
        rounds = max(-(-paths // (int(jobs) * int(chunk))), 1)
        firsts = chunk_starts(paths, rounds * int(jobs))
    bounds = [*firsts, paths]
    return list(zip(bounds[:-1], bounds[1:], strict=True))


def simulate(
    arrivals: np.ndarray,
    start: date,
    ward: WardSettings,
    stays: StayDistribution,
    inpatients_elapsed: np.ndarray,
    hour_profile: np.ndarray,
    seed: int | np.random.SeedSequence,
    *,
    engine: str = "auto",
    jobs: int = 1,
    first_path: int = 0,
    streams: str = "spawned",
    chunk: int | None = None,
    progress: Callable[[int, int], None] | None = None,
    scheduler: str | None = None,
) -> WardResult:
    """Simulate the ward for every path of daily ``arrivals`` (paths x days, patients) with
    ``engine``, in ``jobs`` processes. Arguments as for
    :func:`planner.simulate.ward.simulate_ward`; ``streams`` ("spawned" or "counter") is
    passed to the fast engine (the SimPy engine always uses "spawned"). Paths run in chunks
    (:func:`chunk_bounds`: at most ``chunk`` paths each, default an even split over the
    jobs), and ``progress(done, total)`` is called as chunks finish. ``scheduler``: address
    of a dask.distributed scheduler to run the chunks on instead of local processes. The
    result depends on neither ``jobs``, ``chunk`` nor ``scheduler``."""
    name = chosen_engine(engine, ward)
    if name == "simpy" and streams != "spawned":
        raise PlannerError('streams: the simpy engine draws only the "spawned" streams')
    arrivals = np.asarray(arrivals)
    paths = arrivals.shape[0] if arrivals.ndim == 2 else 1
    pieces = chunk_bounds(paths, jobs, chunk)
    common = (start, ward, stays, inpatients_elapsed, hour_profile, seed)
    arguments = {
        lo: (name, arrivals[lo:hi], *common, first_path + lo, streams) for lo, hi in pieces
    }
    parts: dict[int, WardResult] = {}

    def finished(lo: int, part: WardResult) -> None:
        parts[lo] = part
        if progress is not None:
            progress(sum(hi - low for low, hi in pieces if low in parts), paths)

    if scheduler is not None:
        from planner.simulate.distributed import map_chunks

        results = map_chunks(scheduler, _run, [arguments[lo] for lo, _ in pieces])
        for (lo, _), part in zip(pieces, results, strict=True):
            finished(lo, part)
    elif jobs == 1 or len(pieces) == 1:
        for lo, _ in pieces:
            finished(lo, _run(*arguments[lo]))
    else:
        shifts = len(ward.staffing.shifts)
        return _in_processes(pieces, arguments, min(int(jobs), len(pieces)), finished, shifts)
    return WardResult.concat([parts[lo] for lo, _ in pieces])


def _in_processes(pieces, arguments, jobs, finished, shifts) -> WardResult:
    """Chunk i runs in this process when i is a multiple of ``jobs``, the others in the
    session's ``jobs - 1`` workers (:mod:`planner.simulate.workers`; the chunks are of nearly
    equal size, so the processes finish together); every process writes its chunks' measures
    into one set of shared arrays."""
    paths, days = pieces[-1][1], arguments[0][1].shape[1]
    specification = {name: ((paths, days), np.float64 if name == "wait_hours" else np.int32)
                     for name in PATH_DAILY}  # fmt: skip
    specification |= {name: ((paths, days, shifts), np.int32) for name in PATH_SHIFTS}
    here = [lo for i, (lo, _) in enumerate(pieces) if i % jobs == 0]
    forked = workers.can_fork()
    shared = workers.SharedArrays(specification) if forked else None
    output = shared.arrays if forked else {
        name: np.zeros(shape, dtype) for name, (shape, dtype) in specification.items()
    }  # fmt: skip
    place = (shared.path, shared.layout) if forked else ()
    results = {}
    try:
        futures = {
            lo: workers.submit(jobs - 1, _run_into_shared, *place, lo, arguments[lo])
            if forked
            else workers.submit(jobs - 1, _run, *arguments[lo])  # results come back pickled
            for lo, _ in pieces
            if lo not in here
        }
        for lo in here:
            results[lo] = _run(*arguments[lo])
            _store(results[lo], lo, output)
            finished(lo, results[lo])
        for lo, future in futures.items():
            try:
                part = future.result()
            except BrokenProcessPool:  # a worker was killed: run its chunk here instead
                part = _run(*arguments[lo])
            if part is not None:
                _store(part, lo, output)
            finished(lo, part)
    except BaseException:  # interrupted (Ctrl-C) or failed: stop the workers' chunks too
        workers.stop()
        raise
    finally:
        if shared is not None:
            shared.remove()
    return replace(results[0], **output)

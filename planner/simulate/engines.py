"""Choosing the ward simulation engine and running chunks of paths in parallel.

Engines: "simpy" (:func:`planner.simulate.ward.simulate_ward`, the SimPy model, one
environment per path), "fast" (:func:`planner.simulate.fast.simulate_ward_fast`, the same rules
as a compiled loop) and "auto" (the fast engine, unless numba cannot compile here: then the
SimPy model, see :func:`engine_problem`). Both engines read the same random inputs
(:mod:`planner.simulate.sampling`), so the choice changes the run time, not the numbers.

``jobs`` > 1 splits the paths into consecutive chunks run in ``jobs`` processes (this one and
``jobs - 1`` workers, started on first use and kept for the session: see
:mod:`planner.simulate.workers`), or, given a ``scheduler``, on a dask.distributed cluster
(:mod:`planner.simulate.distributed`); each chunk passes its ``first_path``, so every path
draws its own streams and the result, the chunks' arrays joined along the path axis, is
identical to ``jobs = 1``. The processes write their chunks' measures straight into result
arrays in shared memory, so no result is pickled and nothing is joined afterwards.
"""

from __future__ import annotations

from concurrent.futures.process import BrokenProcessPool
from dataclasses import replace

import numpy as np

from planner.errors import PlannerError
from planner.schema import choices
from planner.simulate import workers
from planner.simulate.fast import simulate_ward_fast
from planner.simulate.model import RunOptions, WardModel
from planner.simulate.result import PATH_DAILY, PATH_SHIFTS, WardResult
from planner.simulate.ward import simulate_ward

ENGINES = choices("simulation.engine")
#: Paths per chunk of simulation work: small for the SimPy engine (the progress bar moves),
#: large for the fast engine (it works across the paths of a chunk at once).
CHUNK_PATHS = {"simpy": 100, "fast": 4096}


def engine_problem(engine: str) -> str | None:
    """Why ``engine`` ("auto" or "fast") cannot run the compiled loop here, as one line that
    says the SimPy model runs instead; None when it can (or for "simpy")."""
    from planner.simulate.compiled import compiler_problem

    problem = compiler_problem() if engine != "simpy" else None
    return None if problem is None else f"fast engine unavailable, {problem}: using the SimPy model"


def chosen_engine(engine: str) -> str:
    """The engine that runs: "simpy" or "fast" ("auto" and "fast" are the fast engine, which
    covers every ward set-up, unless numba cannot compile here)."""
    if engine not in ENGINES:
        raise PlannerError(f"engine must be one of {ENGINES}, got {engine!r}")
    return "simpy" if engine == "simpy" or engine_problem(engine) else "fast"


def chunk_starts(paths: int, jobs: int) -> list[int]:
    """First path of each of at most ``jobs`` consecutive chunks of nearly equal size."""
    if int(jobs) != jobs or jobs < 1:
        raise PlannerError(f"jobs must be a whole number >= 1, got {jobs!r}")
    chunks = max(min(int(jobs), paths), 1)
    return sorted({paths * i // chunks for i in range(chunks)})


def _run(engine: str, arrivals: np.ndarray, model: WardModel, seed, first_path: int) -> WardResult:
    run = simulate_ward if engine == "simpy" else simulate_ward_fast
    return run(arrivals, model, seed, first_path=first_path)


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
    model: WardModel,
    seed: int | np.random.SeedSequence,
    options: RunOptions | None = None,
    *,
    first_path: int = 0,
    chunk: int | None = None,
) -> WardResult:
    """Simulate ``model`` for every path of daily ``arrivals`` (paths x days, patients) with
    the engine, processes and cluster of ``options`` (default: "auto", one process). Paths run
    in chunks (:func:`chunk_bounds`: at most ``chunk`` paths each, default the engine's
    :data:`CHUNK_PATHS` split evenly over the jobs), and ``options.progress(done, total)`` is
    called as chunks finish. ``first_path``: number of the first path, as for
    :func:`planner.simulate.ward.simulate_ward`. The result depends on neither the engine,
    ``jobs``, ``chunk`` nor the scheduler."""
    options = options or RunOptions()
    name = chosen_engine(options.engine or "auto")
    jobs, progress = options.jobs, options.progress
    arrivals = np.asarray(arrivals)
    paths = arrivals.shape[0] if arrivals.ndim == 2 else 1
    if chunk is None:
        chunk = min(CHUNK_PATHS[name], max(1, -(-paths // max(int(jobs), 1))))
    pieces = chunk_bounds(paths, jobs, chunk)
    arguments = {lo: (name, arrivals[lo:hi], model, seed, first_path + lo) for lo, hi in pieces}
    parts: dict[int, WardResult] = {}

    def finished(lo: int, part: WardResult) -> None:
        parts[lo] = part
        if progress is not None:
            progress(sum(hi - low for low, hi in pieces if low in parts), paths)

    if options.scheduler is not None:
        from planner.simulate.distributed import map_chunks

        results = map_chunks(options.scheduler, _run, [arguments[lo] for lo, _ in pieces])
        for (lo, _), part in zip(pieces, results, strict=True):
            finished(lo, part)
    elif jobs == 1 or len(pieces) == 1:
        for lo, _ in pieces:
            finished(lo, _run(*arguments[lo]))
    else:
        shifts = len(model.settings.staffing.shifts)
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

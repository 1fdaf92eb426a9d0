"""Running a hospital's paths: the engine, chunks of paths, processes and a cluster.

As for one ward (:mod:`planner.simulate.engines`): "auto" and "fast" run the compiled loop
(:mod:`planner.hospital.fast`) unless numba cannot compile here, "simpy" the SimPy model
(:mod:`planner.hospital.simpy_model`); the paths run in consecutive chunks, in this process
and ``jobs - 1`` workers, or on a dask.distributed cluster; every path draws its own streams
from its number, so neither the engine, the chunks, the processes nor the cluster change a
number.
"""

from __future__ import annotations

from concurrent.futures.process import BrokenProcessPool

import numpy as np

from planner.hospital.fast import (
    RECORDS,
    beds_by_ward,
    record_specification,
    rows,
    simulate_chunk,
    simulate_hospital_fast,
)
from planner.hospital.model import HospitalModel
from planner.hospital.result import HospitalResult, fill_records, hospital_result
from planner.simulate import workers
from planner.simulate.engines import CHUNK_PATHS, chosen_engine, chunk_bounds
from planner.simulate.model import RunOptions


def _run(engine: str, arrivals: list[np.ndarray], model: HospitalModel, seed, first: int):
    """One chunk's result (for a cluster, which sends results back)."""
    if engine == "simpy":
        from planner.hospital.simpy_model import simulate_hospital

        return simulate_hospital(arrivals, model, seed, first_path=first)
    return simulate_hospital_fast(arrivals, model, seed, first_path=first)


def _into(records, arguments: tuple, end: int) -> None:
    """Run one chunk (``arguments`` as for :func:`_run`) into its rows of ``records``."""
    engine, arrivals, model, seed, first = arguments
    part = rows(records, first, end)
    if engine == "simpy":
        fill_records(part, _run(*arguments), model)
    else:
        simulate_chunk(arrivals, model, seed, first, part)


def _into_shared(arrays: dict[str, np.ndarray], arguments: tuple, end: int) -> None:
    """In a worker: :func:`_into` on the records in shared memory."""
    _into(tuple(arrays[name] for name in RECORDS), arguments, end)


def simulate(
    arrivals: list[np.ndarray],
    model: HospitalModel,
    seed: int | np.random.SeedSequence,
    options: RunOptions | None = None,
) -> HospitalResult:
    """Simulate ``model`` for every path of the wards' daily ``arrivals`` (each (paths x
    days), hospital order) with the engine, processes and cluster of ``options``;
    ``options.progress(done, total)`` is called as chunks finish. Every chunk writes its
    measures straight into one set of record arrays (in shared memory when other processes
    run chunks), so no chunk's result is joined or sent back, except from a cluster."""
    options = options or RunOptions()
    name = chosen_engine(options.engine or "auto")
    paths, days = np.asarray(arrivals[0]).shape
    jobs = max(int(options.jobs), 1)
    chunk = min(CHUNK_PATHS[name], max(1, -(-paths // jobs)))
    pieces = chunk_bounds(paths, jobs, chunk)
    arguments = [(name, [np.asarray(a)[lo:hi] for a in arrivals], model, seed, lo)
                 for lo, hi in pieces]  # fmt: skip
    specification = record_specification(model, paths, days)
    forked = jobs > 1 and len(pieces) > 1 and options.scheduler is None and workers.can_fork()
    shared = workers.SharedArrays(specification) if forked else None
    arrays = shared.arrays if forked else {
        key: np.zeros(shape, dtype) for key, (shape, dtype) in specification.items()
    }  # fmt: skip
    records = tuple(arrays[key] for key in RECORDS)
    done = [0]

    def finished(i: int) -> None:
        done[0] += pieces[i][1] - pieces[i][0]
        if options.progress is not None:
            options.progress(done[0], paths)

    try:
        if options.scheduler is not None:
            from planner.simulate.distributed import map_chunks

            for i, part in enumerate(map_chunks(options.scheduler, _run, arguments)):
                fill_records(rows(records, *pieces[i]), part, model)
                finished(i)
        elif jobs == 1 or len(pieces) == 1:
            for i, args in enumerate(arguments):
                _into(records, args, pieces[i][1])
                finished(i)
        else:
            _in_processes(records, shared, arguments, pieces, (jobs, finished))
    finally:
        if shared is not None:
            shared.remove()
    return hospital_result(model, 0, beds_by_ward(model, days), records)


def _in_processes(records, shared, arguments, pieces, running) -> None:
    """Chunk i runs here when i is a multiple of ``jobs``, the others in the session's
    workers, each writing into the shared records (or, where processes are not forked,
    sending its result back)."""
    jobs, finished = running
    try:
        futures = {}
        for i, args in enumerate(arguments):
            if i % jobs == 0:
                continue
            if shared is None:  # results come back pickled
                futures[i] = workers.submit(jobs - 1, _run, *args)
                continue
            place = (shared.path, shared.layout)
            futures[i] = workers.submit(jobs - 1, workers.run_on_shared, *place, _into_shared,
                                        args, pieces[i][1])  # fmt: skip
        for i, args in enumerate(arguments):
            if i % jobs == 0:
                _into(records, args, pieces[i][1])
                finished(i)
        for i, future in futures.items():
            try:
                part = future.result()
            except BrokenProcessPool:  # a worker was killed: run its chunk here
                _into(records, arguments[i], pieces[i][1])
                part = None
            if part is not None:
                fill_records(rows(records, *pieces[i]), part, arguments[i][2])
            finished(i)
    except BaseException:  # interrupted or failed: stop the workers' chunks too
        workers.stop()
        raise

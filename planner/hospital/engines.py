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

from planner.hospital.model import HospitalModel
from planner.hospital.result import HospitalResult, allocate, fill
from planner.simulate import workers
from planner.simulate.engines import CHUNK_PATHS, chosen_engine, chunk_bounds
from planner.simulate.model import RunOptions


def _run(engine: str, arrivals: list[np.ndarray], model: HospitalModel, seed, first: int):
    if engine == "simpy":
        from planner.hospital.simpy_model import simulate_hospital

        return simulate_hospital(arrivals, model, seed, first_path=first)
    from planner.hospital.fast import simulate_hospital_fast

    return simulate_hospital_fast(arrivals, model, seed, first_path=first)


def simulate(
    arrivals: list[np.ndarray],
    model: HospitalModel,
    seed: int | np.random.SeedSequence,
    options: RunOptions | None = None,
) -> HospitalResult:
    """Simulate ``model`` for every path of the wards' daily ``arrivals`` (each (paths x
    days), hospital order) with the engine, processes and cluster of ``options``;
    ``options.progress(done, total)`` is called as chunks finish."""
    options = options or RunOptions()
    name = chosen_engine(options.engine or "auto")
    paths = np.asarray(arrivals[0]).shape[0]
    jobs = max(int(options.jobs), 1)
    chunk = min(CHUNK_PATHS[name], max(1, -(-paths // jobs)))
    pieces = chunk_bounds(paths, jobs, chunk)
    arguments = [(name, [np.asarray(a)[lo:hi] for a in arrivals], model, seed, lo)
                 for lo, hi in pieces]  # fmt: skip
    whole: list[HospitalResult] = []  # the result, allocated when the first chunk is done
    done = [0]

    def finished(i: int, part: HospitalResult) -> None:
        if len(pieces) == 1:
            whole.append(part)
        else:
            if not whole:
                whole.append(allocate(part, paths))
            fill(whole[0], part, pieces[i][0])
        done[0] += part.paths
        if options.progress is not None:
            options.progress(done[0], paths)

    if options.scheduler is not None:
        from planner.simulate.distributed import map_chunks

        for i, part in enumerate(map_chunks(options.scheduler, _run, arguments)):
            finished(i, part)
    elif jobs == 1 or len(pieces) == 1:
        for i, args in enumerate(arguments):
            finished(i, _run(*args))
    else:
        try:
            futures = {i: workers.submit(jobs - 1, _run, *args)
                       for i, args in enumerate(arguments) if i % jobs}  # fmt: skip
            for i, args in enumerate(arguments):
                if i % jobs == 0:
                    finished(i, _run(*args))
            for i, future in futures.items():
                try:
                    finished(i, future.result())
                except BrokenProcessPool:  # a worker was killed: run its chunk here
                    finished(i, _run(*arguments[i]))
        except BaseException:
            workers.stop()
            raise
    return whole[0]

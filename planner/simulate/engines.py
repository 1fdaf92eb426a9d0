"""Choosing the ward simulation engine and running chunks of paths in parallel.

Engines: "simpy" (:func:`planner.simulate.ward.simulate_ward`, one SimPy run per path),
"fast" (:func:`planner.simulate.fast.simulate_ward_fast`, numpy across paths) and "auto" (the
fast engine whenever it covers the ward set-up). With the default random streams both engines
give the same result for the same seed, so the choice changes the run time, not the numbers.

``jobs`` > 1 splits the paths into consecutive chunks run in worker processes; each chunk
passes its ``first_path``, so every path draws its own streams and the concatenated result is
identical to ``jobs = 1``.
"""

from __future__ import annotations

from collections.abc import Callable
from concurrent.futures import ProcessPoolExecutor, as_completed
from datetime import date
from typing import TYPE_CHECKING

import numpy as np
import pandas as pd

from planner.errors import PlannerError
from planner.simulate.fast import simulate_ward_fast
from planner.simulate.settings import WardSettings
from planner.simulate.ward import POLICIES, WardResult, simulate_ward

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


def _concat(parts: list[WardResult]) -> WardResult:
    return WardResult(
        daily=pd.concat([part.daily for part in parts], ignore_index=True),
        shifts=pd.concat([part.shifts for part in parts], ignore_index=True),
    )


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
) -> WardResult:
    """Simulate the ward for every path of daily ``arrivals`` (paths x days, patients) with
    ``engine``, in ``jobs`` worker processes. Arguments as for
    :func:`planner.simulate.ward.simulate_ward`; ``streams`` ("spawned" or "counter") is
    passed to the fast engine (the SimPy engine always uses "spawned"). Paths run in chunks
    of ``chunk`` paths (default: an even split over the jobs), and ``progress(done, total)``
    is called as chunks finish. The result depends on neither ``jobs`` nor ``chunk``."""
    name = chosen_engine(engine, ward)
    if name == "simpy" and streams != "spawned":
        raise PlannerError('streams: the simpy engine draws only the "spawned" streams')
    if chunk is not None and (int(chunk) != chunk or chunk < 1):
        raise PlannerError(f"chunk must be a whole number >= 1, got {chunk!r}")
    arrivals = np.asarray(arrivals)
    paths = arrivals.shape[0] if arrivals.ndim == 2 else 1
    if chunk is None:
        firsts = chunk_starts(paths, jobs)
    else:
        chunk_starts(paths, jobs)  # validates jobs
        firsts = list(range(0, paths, int(chunk))) or [0]
    bounds = [*firsts, paths]
    pieces = list(zip(bounds[:-1], bounds[1:], strict=True))
    common = (start, ward, stays, inpatients_elapsed, hour_profile, seed)
    parts: dict[int, WardResult] = {}

    def finished(lo: int, part: WardResult) -> None:
        parts[lo] = part
        if progress is not None:
            progress(sum(hi - low for low, hi in pieces if low in parts), paths)

    if jobs == 1 or len(pieces) == 1:
        for lo, hi in pieces:
            finished(lo, _run(name, arrivals[lo:hi], *common, first_path + lo, streams))
    else:
        with ProcessPoolExecutor(max_workers=min(int(jobs), len(pieces))) as pool:
            futures = {
                pool.submit(_run, name, arrivals[lo:hi], *common, first_path + lo, streams): lo
                for lo, hi in pieces
            }
            for future in as_completed(futures):
                finished(futures[future], future.result())
    return _concat([parts[lo] for lo, _ in pieces])

"""Engine choice, parallel chunks and the session's workers: the result never depends on them."""

from __future__ import annotations

import multiprocessing
import os
import platform
import signal
import tempfile
import time
from datetime import date
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from planner import allocator
from planner.errors import PlannerError
from planner.simulate import distributed, engines, workers
from planner.simulate.engines import (
    ENGINES,
    chosen_engine,
    chunk_bounds,
    chunk_starts,
    simulate,
)
from planner.simulate.model import RunOptions, WardModel
from planner.simulate.result import WardResult
from planner.simulate.settings import BedChange, WardSettings
from planner.simulate.stays import Lognormal
from planner.simulate.ward import simulate_ward

START = date(2024, 1, 1)
UNIFORM = np.full(24, 1 / 24)
WARD = WardSettings(beds=14, bed_changes=(BedChange(date(2024, 1, 6), date(2024, 1, 9), -3),))
STAYS = Lognormal.from_mean_sd(4.0, 3.0)
ELAPSED = np.linspace(0.0, 6.0, 10)


def arrivals(paths: int = 9, days: int = 21) -> np.ndarray:
    return np.random.default_rng(1).poisson(4.0, size=(paths, days))


MODEL = WardModel(START, WARD, STAYS, ELAPSED, UNIFORM)


def run(chunk=None, first_path=0, **options):
    """The test ward simulated with ``options`` (engine, jobs, scheduler, progress)."""
    return simulate(arrivals(), MODEL, 8, RunOptions(**options), chunk=chunk, first_path=first_path)


def assert_equal_results(first, second):
    pd.testing.assert_frame_equal(first.daily, second.daily, check_exact=True)
    pd.testing.assert_frame_equal(first.shifts, second.shifts, check_exact=True)


def test_auto_picks_the_fast_engine():
    assert ENGINES == ("auto", "simpy", "fast")
    assert chosen_engine("auto") == "fast"
    assert chosen_engine("simpy") == "simpy"


@pytest.mark.parametrize("policy", ["wait", "divert"])
def test_engines_give_the_simpy_model_result(policy):
    ward = WardSettings(beds=12, policy=policy, bed_changes=WARD.bed_changes)
    expected = simulate_ward(arrivals(), WardModel(START, ward, STAYS, ELAPSED, UNIFORM), 8)
    for engine in ENGINES:
        result = simulate(
            arrivals(),
            WardModel(START, ward, STAYS, ELAPSED, UNIFORM),
            8,
            RunOptions(engine=engine),
        )
        assert_equal_results(result, expected)


@pytest.mark.parametrize("engine", ["fast", "simpy"])
def test_two_jobs_give_the_same_result_as_one(engine):
    one = run(engine=engine)
    two = run(engine=engine, jobs=2)
    assert_equal_results(two, one)
    assert two.daily["path"].is_monotonic_increasing


def test_many_chunks_shared_by_two_processes_give_the_same_result():
    seen = []
    several = run(jobs=2, chunk=2, progress=lambda done, total: seen.append((done, total)))
    assert_equal_results(several, run())
    assert len(seen) == len(chunk_bounds(9, 2, 2)) == 6
    assert [done for done, _ in seen] == sorted(done for done, _ in seen)
    assert seen[-1] == (9, 9)
    for name in ("census", "wait_hours", "nurses_required", "shortfall"):
        assert getattr(several, name).dtype == getattr(run(), name).dtype


def test_chunks_keep_first_path():
    shifted = run(jobs=2, first_path=100)
    assert shifted.daily["path"].min() == 100
    np.testing.assert_array_equal(
        shifted.daily.drop(columns="path").to_numpy(),
        simulate(arrivals(), MODEL, 8, first_path=100).daily.drop(columns="path").to_numpy(),
    )


def test_chunks_of_at_most_chunk_paths_are_shared_evenly_by_the_jobs():
    assert chunk_bounds(10_000, 2, 4096) == [(0, 2500), (2500, 5000), (5000, 7500), (7500, 10_000)]
    assert chunk_bounds(300, 1, 100) == [(0, 100), (100, 200), (200, 300)]
    assert chunk_bounds(7, 3, None) == [(0, 2), (2, 4), (4, 7)]
    bounds = chunk_bounds(1001, 3, 64)
    assert len(bounds) % 3 == 0 and max(hi - lo for lo, hi in bounds) <= 64
    assert [lo for lo, _ in bounds[1:]] == [hi for _, hi in bounds[:-1]] and bounds[-1][1] == 1001


def test_scheduler_runs_the_same_chunks(monkeypatch):
    calls = []

    def map_chunks(address, function, arguments):  # a cluster that runs the chunks here
        calls.append((address, len(arguments)))
        return [function(*chunk) for chunk in arguments]

    monkeypatch.setattr(distributed, "map_chunks", map_chunks)
    seen = []
    result = run(scheduler="tcp://scheduler:8786", chunk=4, progress=lambda d, t: seen.append(d))
    assert calls == [("tcp://scheduler:8786", 3)]
    assert seen == [3, 6, 9]
    assert_equal_results(result, run())


def test_concatenated_chunks_equal_the_whole_run():
    whole = run()
    parts = [simulate(arrivals()[lo:hi], MODEL, 8, first_path=lo) for lo, hi in ((0, 4), (4, 9))]
    assert_equal_results(WardResult.concat(parts), whole)
    np.testing.assert_array_equal(WardResult.concat(parts).census, whole.census)
    with pytest.raises(ValueError, match="consecutive"):
        WardResult.concat(parts[::-1])


def test_chunk_starts_are_deterministic_and_cover_the_paths():
    assert chunk_starts(10, 3) == [0, 3, 6]
    assert chunk_starts(2, 4) == [0, 1]
    assert chunk_starts(0, 2) == [0]
    assert chunk_starts(7, 1) == [0]


@pytest.mark.parametrize(
    ("keywords", "message"),
    [
        ({"engine": "gpu"}, "engine"),
        ({"jobs": 0}, "jobs"),
        ({"jobs": 1.5}, "jobs"),
    ],
)
def test_bad_choices_raise(keywords, message):
    with pytest.raises(PlannerError, match=message):
        run(**keywords)


def test_two_jobs_without_fork_give_the_same_result(monkeypatch):
    # Platforms that cannot fork: the workers' results are sent back instead of shared.
    monkeypatch.setattr(multiprocessing, "get_all_start_methods", lambda: ["spawn"])
    assert_equal_results(run(jobs=2, chunk=3), run())


needs_fork = pytest.mark.skipif(not workers.can_fork(), reason="needs forked workers")


def leftovers() -> set[str]:
    folders = {workers.SHARED_FOLDER, tempfile.gettempdir()}
    return {
        str(path) for folder in folders if Path(folder).is_dir()
        for path in Path(folder).glob("planner-*")
    }  # fmt: skip


@needs_fork
def test_shared_arrays_are_zeroed_written_by_a_worker_and_outlive_the_file():
    shared = workers.SharedArrays({"census": ((4, 3), np.int32), "hours": ((4,), np.float64)})
    assert Path(shared.path).exists()
    assert shared.arrays["census"].shape == (4, 3) and shared.arrays["census"].dtype == np.int32
    assert not shared.arrays["census"].any() and not shared.arrays["hours"].any()
    values = {"census": np.array([[1, 2, 3], [4, 5, 6]]), "hours": np.array([0.5, 1.5])}
    workers.submit(1, workers.write_shared, shared.path, shared.layout, 2, values).result()
    shared.remove()
    shared.remove()  # idempotent
    assert not Path(shared.path).exists()
    np.testing.assert_array_equal(shared.arrays["census"][2:], values["census"])
    np.testing.assert_array_equal(shared.arrays["hours"], [0, 0, 0.5, 1.5])


@needs_fork
def test_shared_file_falls_back_to_the_temporary_folder(monkeypatch, tmp_path):
    monkeypatch.setattr(workers, "SHARED_FOLDER", str(tmp_path / "missing"))
    shared = workers.SharedArrays({"census": ((2, 2), np.int32)})
    try:
        assert Path(shared.path).parent == Path(tempfile.gettempdir())
    finally:
        shared.remove()


@needs_fork
def test_repeated_runs_reuse_the_workers_and_leave_no_file():
    before = leftovers()
    first = run(jobs=2)
    pool = workers.pool(1)
    second = run(jobs=2)
    assert workers.pool(1) is pool
    assert_equal_results(first, run())
    assert_equal_results(second, run())
    assert leftovers() <= before


@needs_fork
def test_a_killed_worker_is_replaced_and_the_numbers_do_not_change():
    expected = run()
    run(jobs=2)
    os.kill(workers.submit(1, os.getpid).result(), signal.SIGKILL)
    time.sleep(0.2)
    assert_equal_results(run(jobs=2), expected)
    assert_equal_results(run(jobs=2), expected)


def test_freed_memory_is_kept_on_glibc_and_the_request_skipped_elsewhere(monkeypatch):
    if platform.libc_ver()[0] == "glibc":
        assert allocator.keep_freed_memory()
    monkeypatch.setattr(allocator.ctypes, "CDLL", lambda name: object())  # no mallopt
    assert allocator.keep_freed_memory() is False


@needs_fork
def test_workers_leave_ctrl_c_to_this_process():
    assert workers.submit(1, signal.getsignal, signal.SIGINT).result() == signal.SIG_IGN


@needs_fork
def test_a_failed_run_stops_the_workers_and_the_next_run_is_whole(monkeypatch):
    run(jobs=2)
    pool = workers.pool(1)

    def failing(*arguments):
        raise PlannerError("this chunk failed")

    monkeypatch.setattr(engines, "_run", failing)
    with pytest.raises(PlannerError, match="this chunk failed"):
        run(jobs=2)
    monkeypatch.undo()
    assert workers.pool(1) is not pool
    assert_equal_results(run(jobs=2), run())

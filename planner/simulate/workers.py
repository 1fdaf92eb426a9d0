"""Local worker processes kept for the session, and result arrays they share with this process.

``simulate(..., jobs=N)`` runs chunks of paths in this process and in N - 1 workers. The
workers are started once, on first use, and kept until this process ends (or another number of
workers is asked for), so repeated runs in one process (the plans of a comparison, the origins
of a hindcast, a benchmark) pay the workers' start-up and the first touch of their memory
once, and forking never makes this process's own memory copy-on-write again.

Results travel through :class:`SharedArrays`: one file mapped into memory by this process and by
every worker, which write their chunks' measures straight into it. The file lives in
``/dev/shm`` when that has room (so it never reaches a disk), else in the temporary folder, and
is removed as soon as the run's chunks are done; this process's mapping, and the arrays viewing
it, live on without it. Where processes cannot be forked, the workers are started fresh and
send their results back instead.
"""

from __future__ import annotations

import atexit
import contextlib
import mmap
import multiprocessing
import os
import signal
import tempfile
from concurrent.futures import ProcessPoolExecutor
from concurrent.futures.process import BrokenProcessPool

import numpy as np

from planner.allocator import keep_freed_memory

#: Folder tried first for the shared file, and the room it must keep free (bytes).
SHARED_FOLDER = "/dev/shm"
_SPARE_BYTES = 64 * 2**20
_ALIGN = 64


def worker_setup() -> None:
    """Start of every worker process: keep freed memory, and leave Ctrl-C to the main process
    (which stops the workers), so an interrupted run prints no worker tracebacks."""
    keep_freed_memory()
    signal.signal(signal.SIGINT, signal.SIG_IGN)


def _report_and_set_up(started) -> None:
    """Start of every worker of the session's pool: set up as :func:`worker_setup`, then
    report this process's id through ``started`` (a queue), so that :func:`stop` can end it."""
    worker_setup()
    started.put(os.getpid())


def can_fork() -> bool:
    """Whether worker processes can be forked from this one (all but Windows)."""
    return "fork" in multiprocessing.get_all_start_methods()


def _folder_for(size: int) -> str:
    """``SHARED_FOLDER`` if it exists with ``size`` bytes to spare, else the temporary folder."""
    try:
        status = os.statvfs(SHARED_FOLDER)
    except (AttributeError, OSError):
        return tempfile.gettempdir()
    room = status.f_bavail * status.f_frsize
    return SHARED_FOLDER if room >= size + _SPARE_BYTES else tempfile.gettempdir()


def _views(buffer, layout) -> dict[str, np.ndarray]:
    views = {}
    for name, (offset, shape, dtype) in layout.items():
        flat = np.frombuffer(buffer, dtype=dtype, count=int(np.prod(shape)), offset=offset)
        views[name] = flat.reshape(shape)
    return views


class SharedArrays:
    """Zeroed arrays (``name -> (shape, dtype)``) in one file mapped into shared memory.

    ``arrays`` are this process's views; workers call :func:`write_shared` with ``path`` and
    ``layout``. :meth:`remove` deletes the file (the mapping and the views stay valid)."""

    def __init__(self, specification: dict[str, tuple[tuple[int, ...], type]]):
        layout, size = {}, 0
        for name, (shape, dtype) in specification.items():
            layout[name] = (size, tuple(shape), np.dtype(dtype).str)
            size += -(-int(np.prod(shape)) * np.dtype(dtype).itemsize // _ALIGN) * _ALIGN
        self.layout, size = layout, max(size, 1)
        descriptor, self.path = tempfile.mkstemp(prefix="planner-", dir=_folder_for(size))
        try:
            os.ftruncate(descriptor, size)
            self._mapping = mmap.mmap(descriptor, size)
        except BaseException:
            os.close(descriptor)
            self.remove()
            raise
        os.close(descriptor)
        self.arrays = _views(self._mapping, layout)

    def remove(self) -> None:
        """Delete the file (idempotent)."""
        try:
            os.unlink(self.path)
        except FileNotFoundError:
            pass


def write_shared(path: str, layout: dict, first: int, values: dict[str, np.ndarray]) -> None:
    """In a worker: write ``values`` (per-path arrays) into rows ``first...`` of the shared
    arrays in file ``path``."""
    with open(path, "r+b") as handle:
        mapping = mmap.mmap(handle.fileno(), 0)
    try:
        _copy_rows(_views(mapping, layout), first, values)
    finally:
        mapping.close()


def run_on_shared(path: str, layout: dict, function, *arguments) -> None:
    """In a worker: ``function(arrays, *arguments)`` on the shared arrays in file ``path``
    (name -> array); the arrays must not outlive the call."""
    with open(path, "r+b") as handle:
        mapping = mmap.mmap(handle.fileno(), 0)
    try:
        _call(mapping, layout, function, arguments)
    finally:
        mapping.close()


def _call(mapping, layout, function, arguments) -> None:
    # A function of its own, so that no view of the mapping outlives it.
    function(_views(mapping, layout), *arguments)


def _copy_rows(arrays: dict[str, np.ndarray], first: int, values: dict[str, np.ndarray]) -> None:
    # A function of its own, so that no view of the mapping outlives it (the mapping can then
    # be closed).
    for name, array in arrays.items():
        array[first : first + len(values[name])] = values[name]


#: The session's pool, its kind (workers, forked) and the queue its workers report their
#: process ids through.
_POOL: dict[str, object] = {}


def _shutdown() -> None:
    pool = _POOL.pop("pool", None)
    if pool is not None:
        pool.shutdown(wait=True, cancel_futures=True)


def _running_workers(started) -> list[int]:
    """Process ids reported through ``started`` whose processes are still running."""
    reported = set()
    while not started.empty():
        reported.add(started.get())
    return sorted(reported & {child.pid for child in multiprocessing.active_children()})


def stop() -> None:
    """Stop the session's workers at once, chunks in progress included (after an interrupted
    or failed run); the next run starts new ones."""
    pool = _POOL.pop("pool", None)
    if pool is None:
        return
    for pid in _running_workers(_POOL["started"]):
        with contextlib.suppress(ProcessLookupError):
            os.kill(pid, signal.SIGTERM)
    pool.shutdown(wait=False, cancel_futures=True)


def pool(workers: int) -> ProcessPoolExecutor:
    """The session's pool of ``workers`` processes, started on first use (forked where
    possible) and kept; asking for another number replaces it."""
    kind = (workers, can_fork())
    if _POOL.get("kind") != kind or _POOL.get("pool") is None:
        _shutdown()
        context = multiprocessing.get_context("fork" if kind[1] else None)
        _POOL["started"] = context.SimpleQueue()
        _POOL["pool"] = ProcessPoolExecutor(
            workers, context, initializer=_report_and_set_up, initargs=(_POOL["started"],)
        )
        _POOL["kind"] = kind
        if not _POOL.get("registered"):
            atexit.register(_shutdown)
            _POOL["registered"] = True
    return _POOL["pool"]


def submit(workers: int, function, *arguments):
    """Submit ``function(*arguments)`` to the session's pool, starting a new pool once if the
    old one has broken (a worker was killed)."""
    try:
        return pool(workers).submit(function, *arguments)
    except BrokenProcessPool:
        _POOL["pool"] = None
        return pool(workers).submit(function, *arguments)

"""Asking the C allocator to keep freed memory: a process-wide setting for planner's processes.

Kept apart from the numerics (and from numpy): the command line applies it before anything
else is imported, and worker processes apply it when they start.
"""

from __future__ import annotations

import ctypes

#: glibc ``mallopt`` parameters and the value given to each (bytes).
_M_TRIM_THRESHOLD, _M_MMAP_THRESHOLD = -1, -3
_KEEP_BYTES = 2**30


def keep_freed_memory() -> bool:
    """Ask the C allocator (glibc) to keep freed memory for reuse: no trimming of the heap and
    no separate mapping for arrays under 1 GB. The engines allocate and free arrays of tens of
    MB for every block of paths; handed back to the system, their pages are faulted in again
    on the next block, which cost about a tenth of the fast engine's time
    (``benchmarks/engines.py``). For a process that runs planner's work (the command line and
    its workers); memory stays at its peak until the process ends. Returns whether it applied
    (False off glibc)."""
    try:
        mallopt = ctypes.CDLL(None).mallopt
    except (AttributeError, OSError, TypeError):
        return False
    mallopt.argtypes = (ctypes.c_int, ctypes.c_int)
    return bool(mallopt(_M_TRIM_THRESHOLD, _KEEP_BYTES) and mallopt(_M_MMAP_THRESHOLD, _KEEP_BYTES))

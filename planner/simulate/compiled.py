"""Compiled loops: numba when it is installed and compiles here, plain Python otherwise.

:func:`compiled` marks a loop written in the subset of Python that numba compiles. When
numba works, the loop becomes a numba function compiled on first use and cached on disk beside
the package (``cache=True``), so a process compiles a loop once per installation and later
only loads it; compiled loops may call each other. When it does not (:func:`compiler_problem`
says why), the loop stays plain Python, which gives the same numbers, slowly: the fast engine
is then not offered (``planner.simulate.engines`` falls back to the SimPy model) and the loops
that every engine shares run as Python.
"""

from __future__ import annotations

import functools
import os
from collections.abc import Callable
from typing import Any

#: Set to any value to run as if numba could not compile (tests of the fallback).
DISABLE_VARIABLE = "PLANNER_NO_COMPILER"


def compiled(function: Callable[..., Any]) -> Callable[..., Any]:
    """``function`` compiled by numba (on first call, cached on disk), or ``function`` itself
    when numba cannot compile here."""
    if compiler_problem() is not None:
        return function
    import numba

    return numba.njit(cache=True, nogil=True)(function)


def compiled_inline(function: Callable[..., Any]) -> Callable[..., Any]:
    """As :func:`compiled`, for a small function that compiled loops call once per patient:
    numba copies it into each caller, which saves the call and the reference counting of
    the arrays passed to it (tens of nanoseconds a call)."""
    if compiler_problem() is not None:
        return function
    import numba

    return numba.njit(cache=True, nogil=True, inline="always")(function)


@functools.cache
def compiler_problem() -> str | None:
    """None when numba compiles loops here; else one line saying why not."""
    if os.environ.get(DISABLE_VARIABLE):
        return f"compiling is switched off ({DISABLE_VARIABLE} is set)"
    try:
        import numba

        if numba.njit(cache=True)(_probe)(3) != 6:
            return "numba compiled a test loop that gave a wrong result"
    except Exception as error:  # any failure to import or compile means: do without
        reason = str(error).strip().splitlines()
        return f"numba cannot compile here ({type(error).__name__}: {reason[0] if reason else ''})"
    return None


def _probe(n: int) -> int:
    total = 0
    for i in range(n + 1):
        total += i
    return total

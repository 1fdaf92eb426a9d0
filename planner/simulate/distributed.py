"""Sending simulation work to a dask.distributed cluster (the optional ``dask`` extra).

Work is split exactly as for local jobs (chunks of paths, each with its own first path
number, or whole scenarios of a comparison), so the numbers are the same as a local run.
The workers need ``planner`` installed in the same version as the client.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from typing import Any

from planner.errors import PlannerError

CONNECT_TIMEOUT = "10s"


def connect(address: str, timeout: str = CONNECT_TIMEOUT):
    """A dask.distributed Client for the scheduler at ``address`` (e.g. tcp://10.0.0.5:8786);
    PlannerError if dask is missing or the scheduler does not answer."""
    try:
        from dask.distributed import Client
    except ImportError:
        raise PlannerError(
            "--scheduler: dask.distributed is not installed (pip install 'planner[dask]')"
        ) from None
    try:
        return Client(address, timeout=timeout, set_as_default=False)
    except (OSError, TimeoutError, ValueError) as error:
        reason = str(error).splitlines()[0] if str(error) else type(error).__name__
        raise PlannerError(f"--scheduler {address}: cannot connect ({reason})") from None


def map_chunks(
    address: str,
    function: Callable[..., Any],
    arguments: Sequence[tuple],
    timeout: str = CONNECT_TIMEOUT,
) -> list[Any]:
    """``[function(*a) for a in arguments]``, computed on the cluster, results in order."""
    with connect(address, timeout) as client:
        futures = [client.submit(function, *args, pure=False) for args in arguments]
        return client.gather(futures)

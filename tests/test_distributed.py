"""The dask backend gives the same numbers as a local run (a LocalCluster on loopback)."""

from __future__ import annotations

import numpy as np
import pytest

from planner.errors import PlannerError
from planner.simulate.distributed import map_chunks

distributed = pytest.importorskip("dask.distributed")

pytestmark = pytest.mark.filterwarnings(
    "ignore::DeprecationWarning", "ignore::ResourceWarning", "ignore::UserWarning"
)


def draw(seed: int, size: int) -> np.ndarray:
    return np.random.default_rng(seed).normal(size=size)


@pytest.fixture(scope="module")
def scheduler():
    cluster = distributed.LocalCluster(
        n_workers=2,
        threads_per_worker=1,
        processes=False,
        protocol="tcp",
        host="127.0.0.1",
        dashboard_address=None,
    )
    yield cluster.scheduler_address
    cluster.close()


def test_results_in_order_and_equal_to_local(scheduler):
    arguments = [(seed, 5) for seed in range(6)]
    remote = map_chunks(scheduler, draw, arguments)
    for (seed, size), values in zip(arguments, remote, strict=True):
        np.testing.assert_array_equal(values, draw(seed, size))


def test_unreachable_scheduler_is_one_line():
    with pytest.raises(PlannerError, match="--scheduler tcp://127.0.0.1:1: cannot connect"):
        map_chunks("tcp://127.0.0.1:1", draw, [(0, 1)], timeout="1s")

"""The dask backend gives the same numbers as a local run (a LocalCluster on loopback)."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from wards import ROTA

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


def test_run_and_compare_on_the_cluster_equal_local_runs(scheduler, tmp_path):
    from click.testing import CliRunner

    from planner.cli import cli

    days = 400
    counts = np.random.default_rng(3).poisson(5.0, days)
    dates = pd.date_range("2025-01-01", periods=days)
    lines = ["date,admissions"] + [
        f"{day.date()},{n}" for day, n in zip(dates, counts, strict=True)
    ]
    (tmp_path / "admissions.csv").write_text("\n".join(lines) + "\n")
    for beds in (8, 10):
        (tmp_path / f"beds{beds}.toml").write_text(
            f'name = "beds {beds}"\nhorizon_weeks = 2\npaths = 60\nseed = 5\n'
            '[history]\nadmissions = "admissions.csv"\n'
            "[forecast]\nstrategy = 'recursive'\nmax_lag = 7\nannual = false\n"
            f"[stay]\nmodel = 'lognormal'\nmean = 2.0\nsd = 1.5\n[beds]\nbase = {beds}\n" + ROTA
        )
    plans = [str(tmp_path / "beds8.toml"), str(tmp_path / "beds10.toml")]
    files = {"run": "weekly.csv", "compare": "comparison.csv"}
    for command, arguments in (("run", plans[:1]), ("compare", plans)):
        local, remote = tmp_path / f"{command}-local", tmp_path / f"{command}-remote"
        first = CliRunner().invoke(cli, [command, *arguments, "--out", str(local), "--jobs", "1"])
        second = CliRunner().invoke(
            cli, [command, *arguments, "--out", str(remote), "--scheduler", scheduler]
        )
        assert first.exit_code == 0 and second.exit_code == 0, first.output + second.output
        assert (local / files[command]).read_bytes() == (remote / files[command]).read_bytes()


def test_a_hospital_on_the_cluster_equals_a_local_run(scheduler):
    from test_hospital_engine import linked_hospital, same

    from planner.hospital.engines import simulate
    from planner.simulate.model import RunOptions

    model, arrivals = linked_hospital()
    local = simulate(arrivals, model, 5, RunOptions(jobs=1))
    remote = simulate(arrivals, model, 5, RunOptions(jobs=2, scheduler=scheduler))
    assert same(local, remote)

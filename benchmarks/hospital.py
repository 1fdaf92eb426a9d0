"""A hospital of 12 wards end to end: ``planner run`` on a hospital file as a user runs it.

Run from the repository root: ``PYTHONPATH=. python benchmarks/hospital.py [--paths N]``.

The hospital is invented here, in a temporary folder: 12 wards of 20 to 46 beds (400 in all),
each with three years of daily emergency admissions at about 85% occupancy (Poisson with a
weekday pattern and a day effect shared by all wards, so busy days come together), lognormal
stays of mean 5 days, a day and a night shift, and outlying to the two neighbouring wards.

Rows (each command a fresh ``python -m planner`` process, so imports, compiling from the
on-disk cache, forecasts, simulation and every report file are included):
- reference: a fresh interpreter importing numpy and pandas;
- run, jobs=2: ``planner run HOSPITAL --paths N --jobs 2`` (N = 10,000 by default, 13 weeks);
- run, jobs=1;
- run on a dask.distributed cluster: a LocalCluster of 2 worker processes started here,
  ``--scheduler``; its hospital.csv must equal the local run's byte for byte.
Peak memory: the command's memory with its worker processes added together, as proportional
set sizes (a page shared by forked processes counted once in all, split between them),
sampled every 0.2 s (psutil, installed with dask.distributed; Linux); for the cluster row, the
command's own processes only (the cluster's workers are not its children).
"""

from __future__ import annotations

import argparse
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd

ROOT = Path(__file__).resolve().parents[1]
BEDS = (20, 24, 28, 30, 32, 34, 36, 36, 38, 40, 36, 46)
MEAN_STAY, SD_STAY, OCCUPANCY = 5.0, 4.0, 0.85
ROTA = """[[staffing.shift]]
name = "day"
start = "07:00"
end = "19:00"
patients_per_nurse = 5
roster = [NURSES, NURSES, NURSES, NURSES, NURSES, NURSES, NURSES]
[[staffing.shift]]
name = "night"
start = "19:00"
end = "07:00"
patients_per_nurse = 8
roster = [NIGHT, NIGHT, NIGHT, NIGHT, NIGHT, NIGHT, NIGHT]
"""


def write_hospital(folder: Path, seed: int = 20261202) -> Path:
    """The invented 12-ward hospital's files in ``folder``; returns the hospital file."""
    rng = np.random.default_rng(seed)
    days = pd.date_range("2023-12-01", "2026-11-29")
    weekday = np.array([1.12, 1.08, 1.02, 1.0, 1.0, 0.88, 0.9])[days.day_of_week]
    shared = rng.lognormal(-0.02, 0.2, size=days.size)
    wards = []
    for w, beds in enumerate(BEDS):
        rate = OCCUPANCY * beds / MEAN_STAY
        counts = rng.poisson(rate * weekday * shared * rng.lognormal(-0.005, 0.1, days.size))
        pd.DataFrame({"date": days.strftime("%Y-%m-%d"), "admissions": counts}).to_csv(
            folder / f"ward{w + 1}.csv", index=False)  # fmt: skip
        rota = ROTA.replace("NURSES", str(-(-beds // 5))).replace("NIGHT", str(-(-beds // 8)))
        (folder / f"ward{w + 1}.toml").write_text(
            f'name = "ward {w + 1}"\n[history]\nadmissions = "ward{w + 1}.csv"\n'
            f'[stay]\nmodel = "lognormal"\nmean = {MEAN_STAY}\nsd = {SD_STAY}\n'
            f'[beds]\nbase = {beds}\npolicy = "wait"\n' + rota)  # fmt: skip
        wards.append(f'[[ward]]\nname = "W{w + 1}"\nscenario = "ward{w + 1}.toml"\n')
    links = "".join(
        f'W{w + 1} = ["W{(w + 1) % len(BEDS) + 1}", "W{(w - 1) % len(BEDS) + 1}"]\n'
        for w in range(len(BEDS))
    )
    path = folder / "hospital.toml"
    path.write_text('name = "twelve wards"\nhorizon_weeks = 13\nseed = 7\n' + "".join(wards)
                    + "[outlying]\nmove_back = true\n[outlying.to]\n" + links)  # fmt: skip
    return path


def command(arguments: list[str]) -> tuple[float, float]:
    """Seconds of a fresh process (run alone), then its peak memory (GB, the process and its
    children together) from a second run that is watched (reading the memory of large
    processes slows them, so that run is not timed)."""
    environment = {**os.environ, "PYTHONPATH": str(ROOT), "OPENBLAS_NUM_THREADS": "1"}
    clock = time.perf_counter()
    subprocess.run([sys.executable, *arguments], check=True, capture_output=True,
                   env=environment, cwd=ROOT)  # fmt: skip
    return time.perf_counter() - clock, watched_memory(arguments, environment)


def watched_memory(arguments: list[str], environment: dict[str, str]) -> float:
    """Peak memory (GB) of a fresh process and its children, sampled every 0.2 s."""
    import psutil

    process = subprocess.Popen([sys.executable, *arguments], env=environment, cwd=ROOT,
                               stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)  # fmt: skip
    watched, peak = psutil.Process(process.pid), 0
    while process.poll() is None:
        try:
            tree = [watched, *watched.children(recursive=True)]
            peak = max(peak, sum(p.memory_full_info().pss for p in tree))
        except psutil.Error:  # a process ended while being read
            pass
        time.sleep(0.2)
    if process.returncode:
        raise SystemExit(process.stderr.read().decode())
    return peak / 1e9


def main(arguments: list[str] | None = None) -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--paths", type=int, default=10_000)
    paths = parser.parse_args(arguments).paths
    with tempfile.TemporaryDirectory() as temporary:
        folder = Path(temporary)
        hospital = write_hospital(folder)
        patients = OCCUPANCY * sum(BEDS) / MEAN_STAY * 91 * paths
        print(
            f"12 wards, {sum(BEDS)} beds, about {OCCUPANCY * sum(BEDS) / MEAN_STAY:.0f} "
            f"admissions a day, {paths:,} paths x 13 weeks (~{patients / 1e6:.0f} M patients)"
        )
        reference, _ = command(["-c", "import numpy, pandas"])
        print(f"{'row':34s} {'seconds':>8s} {'x reference':>12s} {'peak GB':>8s}")
        print(f"{'reference (import numpy, pandas)':34s} {reference:8.2f} {1.0:12.1f}")
        rows = {}
        for jobs in (2, 1):
            out = folder / f"out{jobs}"
            run = ["-m", "planner", "run", str(hospital), "--paths", str(paths), "--jobs",
                   str(jobs), "--out", str(out), "--overwrite"]  # fmt: skip
            seconds, peak = command(run)
            rows[jobs] = out
            print(f"{f'planner run, jobs={jobs}':34s} {seconds:8.2f} {seconds / reference:12.1f} "
                  f"{peak:8.2f}")  # fmt: skip
        from dask.distributed import LocalCluster

        with LocalCluster(n_workers=2, threads_per_worker=1, dashboard_address=None) as cluster:
            out = folder / "cluster"
            run = ["-m", "planner", "run", str(hospital), "--paths", str(paths), "--scheduler",
                   cluster.scheduler_address, "--out", str(out), "--overwrite"]  # fmt: skip
            seconds, peak = command(run)
            equal = (out / "hospital.csv").read_bytes() == (rows[2] / "hospital.csv").read_bytes()
            print(f"{'planner run, dask cluster of 2':34s} {seconds:8.2f} "
                  f"{seconds / reference:12.1f} {peak:8.2f}  hospital.csv equal to local: "
                  f"{equal}")  # fmt: skip


if __name__ == "__main__":
    main()

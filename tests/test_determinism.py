"""Reproducibility: the same scenario and seed give byte-identical result files, and run.json
holds what is needed to repeat the run."""

from __future__ import annotations

import hashlib
import json
from importlib import metadata

import numpy as np
import pytest
from click.testing import CliRunner

from planner.cli import cli
from tests.test_bad_input import GOOD, Case, plan, write_case

TABLES = ("weekly.csv", "daily.csv", "shifts.csv", "forecast.csv")
EPISODES = (
    "admitted_at,discharged_at\n2026-04-20 10:15,2026-04-24 09:00\n"
    "2026-04-27 23:40,\n2026-04-29 08:05,\n2026-04-30 14:30,2026-04-30 18:00\n"
)


@pytest.fixture(scope="module")
def runs(tmp_path_factory):
    """Three runs of one small ward with episodes: twice with seed 5, once with seed 6."""
    root = tmp_path_factory.mktemp("determinism")
    scenario = plan(history='admissions = "ward.csv"\nepisodes = "episodes.csv"')
    scenario = scenario.replace("[stay]\nmodel = 'lognormal'\nmean = 4.0\nsd = 3.0\n", "")
    given = write_case(
        root, Case("good", (), {"ward.csv": GOOD, "episodes.csv": EPISODES}, scenario)
    )
    folders = {}
    for name, seed in (("first", "5"), ("second", "5"), ("other_seed", "6")):
        folders[name] = root / name
        argv = ["run", str(given), "--paths", "50", "--seed", seed, "--out", str(folders[name])]
        result = CliRunner().invoke(cli, argv)
        assert result.exit_code == 0, result.output
    return root, folders


@pytest.mark.parametrize("table", TABLES)
def test_same_seed_same_bytes(runs, table):
    _, folders = runs
    first = (folders["first"] / table).read_bytes()
    assert first == (folders["second"] / table).read_bytes()
    assert first.count(b"\n") > 2 and b"\r" not in first


def test_another_seed_changes_the_numbers(runs):
    """Guards the test above: the files do depend on the seed."""
    _, folders = runs
    for table in ("daily.csv", "forecast.csv"):
        assert (folders["first"] / table).read_bytes() != (
            folders["other_seed"] / table
        ).read_bytes()


def test_run_record_holds_what_repeats_the_run(runs):
    root, folders = runs
    record = json.loads((folders["first"] / "run.json").read_text())
    assert record["seed"] == 5 and record["paths"] == 50
    scenario = record["scenario"]
    assert scenario["history"]["admissions"] == str((root / "ward.csv").resolve())
    assert scenario["forecast"] == {"strategy": "recursive", "max_lag": 7, "annual": False}
    assert scenario["beds"]["base"] == 24 and scenario["horizon_weeks"] == 2
    for name in ("ward.csv", "episodes.csv"):
        path = str((root / name).resolve())
        assert record["inputs"][path] == hashlib.sha256((root / name).read_bytes()).hexdigest()
    versions = record["versions"]
    assert versions["numpy"] == np.__version__
    for package in ("planner", "pandas", "scipy", "statsmodels", "simpy"):
        assert versions[package] == metadata.version(package)
    assert record["scenario_file"] == str((root / "plan.toml").resolve())
    other = json.loads((folders["other_seed"] / "run.json").read_text())
    assert other["seed"] == 6 and other["inputs"] == record["inputs"]

"""`planner size` on hospital files: beds per ward for the hospital's target, on invented
wards (a known process: Poisson admissions, lognormal stays)."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner
from wards import ROTA

from planner.cli import cli
from planner.runs.hospital_sizing import size_hospital
from planner.scenario_hospital import load_hospital
from planner.simulate.model import RunOptions


def write_hospital(folder: Path, beds=(6, 6), linked: bool = True) -> Path:
    """Two wards of the same demand (Poisson, 2.5 a day, stays of mean 2 days: 5 erlangs)."""
    days = pd.date_range("2025-01-01", periods=420)
    rng = np.random.default_rng(4)
    wards = ""
    for w, n in enumerate(beds):
        counts = rng.poisson(2.5, days.size)
        pd.DataFrame({"date": days.strftime("%Y-%m-%d"), "admissions": counts}).to_csv(
            folder / f"w{w}.csv", index=False)  # fmt: skip
        (folder / f"w{w}.toml").write_text(
            f'[history]\nadmissions = "w{w}.csv"\n[forecast]\nstrategy = "recursive"\n'
            f"max_lag = 7\nannual = false\n[stay]\nmodel = 'lognormal'\nmean = 2.0\nsd = 1.5\n"
            f'[beds]\nbase = {n}\npolicy = "divert"\n' + ROTA)  # fmt: skip
        wards += f'[[ward]]\nname = "W{w}"\nscenario = "w{w}.toml"\n'
    links = '[outlying.to]\nW0 = ["W1"]\nW1 = ["W0"]\n' if linked else ""
    path = folder / "hospital.toml"
    path.write_text(f"horizon_weeks = 3\npaths = 200\nseed = 3\n{wards}{links}")
    return path


def test_fewest_beds_meet_the_target_and_pooling_needs_fewer(tmp_path):
    linked = load_hospital(write_hospital(tmp_path))
    result = size_hospital(linked, 0.2, None, RunOptions(paths=200))
    assert result.met and result.risk <= 0.2
    assert result.steps.iloc[-1][["W0", "W1"]].tolist() == list(result.beds)
    # Fully linked wards that divert only when both are full are one loss system of their
    # total beds, whatever the split (Source: Erlang B of the pooled beds, Erlang 1917;
    # pooling, de Bruin et al., Health Care Manag. Sci. 13 (2010) 1-16): one bed fewer in
    # all misses the target, and unlinked wards need at least as many beds in all.
    fewer = size_hospital(linked, 0.2, sum(result.beds) - 1, RunOptions(paths=200))
    assert not fewer.met
    alone_folder = tmp_path / "alone"
    alone_folder.mkdir()
    alone = load_hospital(write_hospital(alone_folder, linked=False))
    unlinked = size_hospital(alone, 0.2, None, RunOptions(paths=200))
    assert unlinked.met and sum(unlinked.beds) >= sum(result.beds)


def test_a_total_is_shared_out(tmp_path):
    scenario = load_hospital(write_hospital(tmp_path, beds=(3, 9), linked=False))
    result = size_hospital(scenario, 0.05, 12, RunOptions(paths=200))
    assert sum(result.beds) == 12
    # Unlinked wards of the same demand: the bed moves from the ward with 9 to the ward
    # with 3 (Erlang B: B(3, 5) = 0.52 against B(9, 5) = 0.038; Source: Erlang 1917).
    assert result.beds[0] > 3 and result.beds[1] < 9
    assert abs(result.beds[0] - result.beds[1]) <= 2


def test_size_command_on_a_hospital(tmp_path):
    path = write_hospital(tmp_path)
    out = tmp_path / "out"
    result = CliRunner().invoke(cli, ["size", str(path), "--target", "0.2", "--paths", "100",
                                      "--out", str(out)])  # fmt: skip
    assert result.exit_code == 0, result.output
    assert "the hospital needs" in result.output and "professional judgement" in result.output
    assert {"sizing.csv", "sizing.html", "run.json"} == {p.name for p in out.iterdir()}


@pytest.mark.parametrize(
    ("extra", "message"),
    [
        (["--measure", "wait_hours"], "--measure and --shift-target are for ward scenarios"),
        (["--total", "1"], "total: at least one bed per ward (2), got 1"),
    ],
)
def test_size_refusals_on_a_hospital(tmp_path, extra, message):
    out = tmp_path / "out"
    result = CliRunner().invoke(cli, ["size", str(write_hospital(tmp_path)), *extra,
                                      "--out", str(out)])  # fmt: skip
    assert result.exit_code == 2 and message in result.output, result.output
    assert not out.exists()


def test_total_is_refused_for_a_ward(tmp_path):
    ward = Path(__file__).resolve().parents[1] / "scenarios" / "baseline.toml"
    result = CliRunner().invoke(cli, ["size", str(ward), "--total", "30", "--out",
                                      str(tmp_path / "out")])  # fmt: skip
    assert result.exit_code == 2 and "--total is for hospital files" in result.output

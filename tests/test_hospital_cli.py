"""`planner run` and `planner compare` on hospital files, and the hospital file's keys and
refusals: files written, one-line errors with exit status 2, nothing half-written."""

from __future__ import annotations

from pathlib import Path

import pandas as pd
import pytest
from click.testing import CliRunner

from planner.cli import cli
from planner.scenario_hospital import is_hospital_file, load_hospital

DEMO = Path(__file__).resolve().parents[1] / "scenarios"
PATHS = "60"


def hospital(tmp_path: Path, body: str, name: str = "hospital.toml") -> Path:
    """A hospital file over the demo's wards (four weeks, recursive forecasts: quick)."""
    path = tmp_path / name
    path.write_text(body.replace("DEMO", str(DEMO)))
    return path


QUICK = """horizon_weeks = 4
[[ward]]
name = "Larch"
scenario = "DEMO/baseline.toml"
changes = { "forecast.strategy" = "recursive" }
[[ward]]
name = "Alder"
scenario = "DEMO/surgical_ward.toml"
changes = { "forecast.strategy" = "recursive" }
"""
LINKED = QUICK + '[outlying]\nmove_back = true\n[outlying.to]\nLarch = ["Alder"]\n'


def test_run_writes_the_hospital_and_every_ward(tmp_path):
    out = tmp_path / "out"
    path = hospital(tmp_path, LINKED)
    result = CliRunner().invoke(cli, ["run", str(path), "--paths", PATHS, "--jobs", "1",
                                      "--out", str(out)])  # fmt: skip
    assert result.exit_code == 0, result.output
    assert "Larch patients may outlie to Alder" in result.output
    assert "professional judgement" in result.output
    assert {"hospital.csv", "outlying.csv", "placements.csv", "report.html", "run.json",
            "wards", "no_bed.png"} == {p.name for p in out.iterdir()}  # fmt: skip
    assert {"Larch", "Alder"} == {p.name for p in (out / "wards").iterdir()}
    assert (out / "wards" / "Alder" / "weekly.csv").is_file()
    table = pd.read_csv(out / "hospital.csv")
    assert len(table) == 4
    assert ((table["p_no_bed_anywhere"] >= 0) & (table["p_no_bed_anywhere"] <= 1)).all()
    placements = pd.read_csv(out / "placements.csv", index_col="home")
    # Source: the rules: only Larch lists a ward, so Alder's patients never outlie.
    assert placements.loc["Alder", "Larch"] == 0 and placements.loc["Larch", "Alder"] > 0
    page = (out / "report.html").read_text()
    assert "professional judgement" in page and "wards/Larch/report.html" in page


def test_compare_moves_beds_between_wards_paired(tmp_path):
    base = hospital(tmp_path, LINKED)
    moved = hospital(tmp_path, f'extends = "{base}"\nname = "moved"\n[changes.Alder]\n'
                               f'"beds.base" = 16\n[changes.Larch]\n"beds.base" = 32\n',
                     "moved.toml")  # fmt: skip
    out = tmp_path / "out"
    # Two processes: the chunks in shared memory, the wards' folders written in forked ones.
    result = CliRunner().invoke(cli, ["compare", str(base), str(moved), "--paths", PATHS,
                                      "--jobs", "2", "--out", str(out)])  # fmt: skip
    assert result.exit_code == 0, result.output
    glance = pd.read_csv(out / "glance.csv")
    assert list(glance["scenario"]) == ["hospital", "moved"]
    assert glance["diff_p_no_bed_anywhere"].iloc[0] == 0
    larch = pd.read_csv(out / "plans" / "moved" / "wards" / "Larch" / "weekly.csv")
    alder = pd.read_csv(out / "plans" / "moved" / "wards" / "Alder" / "weekly.csv")
    assert (larch["beds_open"] == 32).all() and (alder["beds_open"] == 16).all()


def test_the_demo_hospital_and_its_plans_are_hospital_files():
    names = ("kestrel_vale_hospital", "hospital_beds_to_medicine", "hospital_no_outlying")
    for name in names:
        assert is_hospital_file(DEMO / f"{name}.toml")
    assert not is_hospital_file(DEMO / "baseline.toml")
    plan = load_hospital(DEMO / "hospital_beds_to_medicine.toml")
    beds = dict(zip(plan.names, (s.ward.beds for s in plan.scenarios), strict=True))
    assert beds == {"Larch": 32, "Alder": 16, "Rowan": load_hospital(
        DEMO / "kestrel_vale_hospital.toml").scenarios[2].ward.beds}  # fmt: skip
    assert not any(load_hospital(DEMO / "hospital_no_outlying.toml").outlying.hosts)


@pytest.mark.parametrize(
    ("body", "message"),
    [
        ("colour = 1\n" + QUICK, "unknown key 'colour' in a hospital file"),
        ('[[ward]]\nname = "Larch"\n', "ward 1: give name and scenario"),
        (QUICK + '[outlying.to]\nOak = ["Larch"]\n', "outlying.to: no ward named 'Oak'"),
        (QUICK + '[outlying.to]\nLarch = ["Larch"]\n', "a ward cannot outlie to itself"),
        (QUICK + '[outlying.to]\nLarch = ["Elm"]\n', "outlying.to.Larch: give a list of ward"),
        (QUICK + "[outlying]\nmove_back_hours = 0\n", "outlying.move_back_hours: give hours > 0"),
        (QUICK + "[outlying]\nsideways = true\n", "outlying: unknown key 'sideways'"),
        (QUICK + '[changes.Oak]\n"beds.base" = 3\n', "changes: no ward named 'Oak'"),
        (QUICK.replace('name = "Alder"', 'name = "Larch"'), "ward 'Larch' is named twice"),
        ("paths = 0\n" + QUICK, "paths: give a whole number >= 1"),
        ("horizon_weeks = 4\nward = []\n", "ward: give at least one [[ward]]"),
    ],
)
def test_bad_hospital_files_are_refused_in_one_line(tmp_path, body, message):
    path = hospital(tmp_path, body)
    out = tmp_path / "out"
    result = CliRunner().invoke(cli, ["run", str(path), "--paths", PATHS, "--out", str(out)])
    assert result.exit_code == 2, result.output
    assert message in result.output
    assert len(result.output.strip().splitlines()) == 1
    assert not out.exists()


def test_compare_refuses_plans_that_cannot_be_paired(tmp_path):
    base = hospital(tmp_path, LINKED)
    other = hospital(tmp_path, QUICK.replace('"Alder"', '"Birch"'), "other.toml")
    slower = hospital(tmp_path, f'extends = "{base}"\n[changes.Larch]\n"forecast.max_lag" = 7\n',
                      "slower.toml")  # fmt: skip
    out = tmp_path / "out"
    for plan, message in ((other, "are not those of"), (slower, "ward Larch has different "
                                                                "forecast settings")):  # fmt: skip
        result = CliRunner().invoke(cli, ["compare", str(base), str(plan), "--out", str(out)])
        assert result.exit_code == 2, result.output
        assert message in result.output and len(result.output.strip().splitlines()) == 1
        assert not out.exists()
    ward = DEMO / "baseline.toml"
    result = CliRunner().invoke(cli, ["compare", str(base), str(ward), "--out", str(out)])
    assert result.exit_code == 2 and "only hospital files or only ward scenarios" in result.output


def test_check_describes_every_ward_and_the_rules(tmp_path):
    result = CliRunner().invoke(cli, ["check", str(hospital(tmp_path, LINKED))])
    assert result.exit_code == 0, result.output
    assert "hospital: hospital, 2 wards" in result.output
    assert "ward Alder (surgical_ward.toml):" in result.output
    assert "outlying: Larch patients may outlie to Alder" in result.output


def test_one_ward_commands_refuse_a_hospital_file(tmp_path):
    result = CliRunner().invoke(cli, ["forecast", str(hospital(tmp_path, QUICK))])
    assert result.exit_code == 2 and "a hospital file" in result.output
    assert len(result.output.strip().splitlines()) == 1


def test_both_engines_write_the_same_hospital_files(tmp_path):
    # The SimPy model and the compiled engine agree path by path on the same drawn inputs
    # (tests/test_hospital_simpy.py), so their files are the same byte for byte.
    path = hospital(tmp_path, LINKED)
    for engine in ("simpy", "fast"):
        arguments = ["--paths", "20", "--jobs", "1", "--engine", engine]
        result = CliRunner().invoke(cli, ["run", str(path), *arguments, "--out",
                                          str(tmp_path / engine)])  # fmt: skip
        assert result.exit_code == 0, result.output
    for name in ("hospital.csv", "outlying.csv", "placements.csv", "wards/Larch/weekly.csv"):
        assert (tmp_path / "simpy" / name).read_bytes() == (tmp_path / "fast" / name).read_bytes()


def test_wards_whose_records_end_on_different_days_are_refused(tmp_path):
    from test_hospital_sizing import write_hospital

    path = write_hospital(tmp_path)
    lines = (tmp_path / "w1.csv").read_text().splitlines()
    (tmp_path / "w1.csv").write_text("\n".join(lines[:-1]) + "\n")  # one day fewer
    out = tmp_path / "out"
    result = CliRunner().invoke(cli, ["run", str(path), "--out", str(out)])
    assert result.exit_code == 2, result.output
    assert "histories end on different days (W0 2026-02-24, W1 2026-02-23)" in result.output
    assert len(result.output.strip().splitlines()) == 1 and not out.exists()

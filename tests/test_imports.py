"""Heavy libraries are imported where they are used: the command line's start and its help load
none of matplotlib, statsmodels, scipy.stats, simpy, numba, pandas and numpy; `planner check`
none of the first five; a run on the demo (empirical stays) neither statsmodels nor
scipy.stats. Each check runs in a fresh interpreter and reads its sys.modules."""

from __future__ import annotations

import json
import subprocess
import sys

import pytest

HEAVY = ("matplotlib", "statsmodels", "scipy.stats", "simpy", "numba", "pandas", "numpy")

LOADED = "import json, sys; print(json.dumps([m for m in {heavy!r} if m in sys.modules]))"

COMMAND = """
import sys
from planner.cli import main
sys.argv = ["planner", *{arguments!r}]
try:
    main()
except SystemExit as stop:
    assert not stop.code, stop.code
"""


def loaded_after(code: str) -> list[str]:
    script = code + "\n" + LOADED.format(heavy=HEAVY)
    done = subprocess.run(
        [sys.executable, "-c", script], capture_output=True, text=True, check=False, timeout=120
    )
    assert done.returncode == 0, done.stderr
    return json.loads(done.stdout.strip().splitlines()[-1])


def test_the_check_can_see_a_heavy_import():
    assert loaded_after("import scipy.stats") == ["scipy.stats", "numpy"]


def test_importing_the_command_line_loads_no_heavy_library():
    assert loaded_after("import planner.cli") == []


@pytest.mark.parametrize("arguments", [["--help"], ["run", "--help"]])
def test_help_loads_no_heavy_library(arguments):
    assert loaded_after(COMMAND.format(arguments=arguments)) == []


def test_check_loads_only_what_reading_the_files_needs():
    assert loaded_after(COMMAND.format(arguments=["check"])) == ["pandas", "numpy"]


def test_the_modules_of_a_run_load_neither_statsmodels_nor_scipy_stats():
    code = (
        "import planner.report.run_report, planner.runs.run, planner.runs.hindcast\n"
        "import planner.forecast.pipeline, planner.simulate.engines\n"
        "from planner.scenario import load_scenario\n"
        "from planner.runs.run import load_history, ward_model\n"
        "plan = load_scenario(None)\n"
        "ward_model(plan, load_history(plan))\n"
    )
    assert loaded_after(code) == ["matplotlib", "simpy", "numba", "pandas", "numpy"]

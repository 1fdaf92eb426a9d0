"""`planner compare`: short shifts and their costs, paired differences, and plans that do not
share their history and forecast (refused, or compared as independent runs on request)."""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import numpy as np
import openpyxl
import pandas as pd
import pytest
from click.testing import CliRunner

from planner.cli import cli
from planner.summaries.comparison import difference

DEMO = Path(__file__).resolve().parents[1] / "scenarios"
DAY_SHIFT = (
    '[[staffing.shift]]\nname = "day"\nstart = "07:00"\nend = "19:00"\npatients_per_nurse = 4\n'
    "roster = [{day}]\n"
    '[[staffing.shift]]\nname = "night"\nstart = "19:00"\nend = "07:00"\npatients_per_nurse = 7\n'
    "roster = [4, 4, 4, 4, 4, 4, 4]\n"
)


def _plan(folder: Path, name: str, extra: str = "", top: str = "") -> Path:
    """The demo ward over two weeks with the recursive strategy (no backtest: quick)."""
    path = folder / f"{name}.toml"
    path.write_text(
        f'extends = "{DEMO / "baseline.toml"}"\nname = "{name}"\nhorizon_weeks = 2\n{top}'
        f'[forecast]\nstrategy = "recursive"\n{extra}'
    )
    return path


def _compare(*arguments) -> object:
    return CliRunner().invoke(cli, ["compare", *map(str, arguments), "--paths", "200",
                                    "--jobs", "1"])  # fmt: skip


def test_unpaired_and_paired_errors_by_hand():
    # Two paths. Base 0 and 2, plan 1 and 3: each mean has sd sqrt(2) over sqrt(2) paths, so
    # SE 1 each; independent runs: sqrt(1 + 1). Paired: every difference is 1, error 0.
    base, plan = np.array([[0.0], [2.0]]), np.array([[1.0], [3.0]])
    diff, se = difference(base, plan, paired=False)
    assert diff[0] == 1.0 and se[0] == pytest.approx(np.sqrt(2.0))
    diff, se = difference(base, plan, paired=True)
    assert diff[0] == 1.0 and se[0] == 0.0


def test_short_shifts_avoided_with_their_cost(tmp_path):
    costs = "[costs]\nnurse_shift = 300.0\nshort_shift = 800.0\n"
    base = _plan(tmp_path, "rota now", top=DAY_SHIFT.format(day="7, 7, 7, 7, 7, 6, 6") + costs)
    more = _plan(
        tmp_path, "saturday seven", top=DAY_SHIFT.format(day="7, 7, 7, 7, 7, 7, 6") + costs
    )
    out = tmp_path / "out"
    result = _compare(base, more, "--out", out)
    assert result.exit_code == 0, result.output
    table = pd.read_csv(out / "costs.csv").set_index("scenario")
    # Two weeks, one more day nurse on each of 2 Saturdays: 2 x 300 more (worked by hand).
    assert table.loc["saturday seven", "incremental_plan_cost"] == pytest.approx(2 * 300.0)
    avoided = table.loc["saturday seven", "short_shifts_avoided"]
    assert avoided > 3 * table.loc["saturday seven", "short_shifts_avoided_se"] > 0
    assert table.loc["saturday seven", "incremental_cost_per_short_shift_avoided"] == (
        pytest.approx(600.0 / avoided, rel=1e-5)
    )
    assert table.loc["rota now", "short_shifts_cost"] == pytest.approx(
        800.0 * table.loc["rota now", "expected_short_shifts"], rel=1e-5
    )
    weekly = pd.read_csv(out / "comparison.csv")
    assert (weekly["pairing"] == "paired").all()
    changed = weekly[weekly["scenario"] == "saturday seven"]
    # Common random numbers: the paired error of the short shifts is below the unpaired one
    # (Sundays stay short in both plans on the same paths).
    assert (
        changed["diff_expected_short_shifts_se"]
        < changed["diff_expected_short_shifts_se_independent"]
    ).all()
    book = openpyxl.load_workbook(out / "comparison.xlsx")
    assert book.sheetnames == ["about", "comparison", "costs"]
    units = dict(zip([c.value for c in book["costs"][1]], [c.value for c in book["costs"][2]],
                     strict=True))  # fmt: skip
    assert "currency" in units["short_shifts_cost"] and "shifts" in units["short_shifts_avoided"]
    page = (out / "comparison.html").read_text()
    assert "short shifts avoided against the first" in page and "1 paired SE" in page
    assert "± +" not in page and "± -" not in page


@pytest.mark.parametrize(
    ("extra", "said"),
    [
        ("max_lag = 14\n", "has different forecast settings"),
        ("", "has a different episodes file"),
    ],
)
def test_plans_without_a_shared_history_are_refused(tmp_path, extra, said):
    first = _plan(tmp_path, "first")
    if extra:
        other = _plan(tmp_path, "other", extra)
    else:  # the same records under another name: another file
        shutil.copy(DEMO / "data" / "kestrel_vale_stays.csv", tmp_path / "copy.csv")
        other = _plan(tmp_path, "other", top='[history]\nepisodes = "copy.csv"\n')
    out = tmp_path / "out"
    result = _compare(first, other, "--out", out)
    assert result.exit_code == 2
    lines = result.output.strip().splitlines()
    assert len(lines) == 1 and "Traceback" not in result.output
    assert lines[0].startswith(str(other)) and str(first) in lines[0] and said in lines[0]
    assert "--independent" in lines[0]
    assert not out.exists()


def test_demand_changes_keep_the_plans_paired(tmp_path):
    # A plan's own demand growth scales the same forecast paths: still paired.
    first = _plan(tmp_path, "first")
    busier = _plan(tmp_path, "busier", top="[demand]\ngrowth = 0.1\n")
    result = _compare(first, busier, "--out", tmp_path / "out")
    assert result.exit_code == 0, result.output


def test_independent_runs_say_so_and_use_unpaired_errors(tmp_path):
    first = _plan(tmp_path, "first")
    other = _plan(tmp_path, "other", "max_lag = 14\n")
    out = tmp_path / "out"
    result = _compare(first, other, "--out", out, "--independent")
    assert result.exit_code == 0, result.output
    assert "independent runs" in result.output
    table = pd.read_csv(out / "comparison.csv")
    assert (table["pairing"] == "independent").all()
    # Unpaired: the error of each difference is sqrt(se_a^2 + se_b^2) of the two estimates
    # (both given in the same file), and the reference row has no difference.
    base = table[table["scenario"] == "first"].reset_index(drop=True)
    changed = table[table["scenario"] == "other"].reset_index(drop=True)
    for measure in ("p_bed_shortfall", "expected_short_shifts"):
        expected = np.sqrt(base[f"{measure}_se"] ** 2 + changed[f"{measure}_se"] ** 2)
        np.testing.assert_allclose(changed[f"diff_{measure}_se"], expected, rtol=1e-4)
        assert (base[f"diff_{measure}_se"] == 0).all()
    seeds = json.loads((out / "run.json").read_text())["seeds"]
    assert len(set(seeds.values())) == 2
    page = (out / "comparison.html").read_text()
    assert "Compared as independent runs" in page and "same simulated patients" not in page
    assert "independent runs" in page.split("<h2>")[0]  # the subtitle says so too

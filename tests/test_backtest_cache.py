"""The backtest cache on disk: hits and misses, what the key depends on, damaged entries, and
the same numbers with and without it (planner.forecast.backtest_cache)."""

from __future__ import annotations

import shutil
from dataclasses import replace
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner

from planner.cli import cli
from planner.forecast import backtest_cache as cache
from planner.forecast.backtest import BacktestInputs
from planner.forecast.deterministic import terms_for_history
from planner.forecast.pipeline import forecast_admissions, observed_columns, run_backtest
from planner.forecast.settings import DemandAdjustment, ForecastSettings
from planner.report.html import CACHED_BACKTEST

QUICK = ForecastSettings(max_lag=7, backtest_origins=3, backtest_paths=40)
HORIZON = 14
DEMO = Path(__file__).resolve().parents[1] / "scenarios"


def admissions(seed: int = 1, days: int = 500, start: str = "2024-01-01") -> pd.Series:
    rng = np.random.default_rng(seed)
    dates = pd.date_range(start, periods=days, freq="D")
    weekend = np.where(dates.day_of_week >= 5, 0.8, 1.0)
    return pd.Series(rng.poisson(5.0 * weekend), index=dates, name="admissions")


@pytest.fixture(scope="module")
def history() -> pd.Series:
    return admissions()


def backtest(history, folder, settings=QUICK, seed=0):
    return run_backtest(history, settings, HORIZON, 100, np.random.default_rng(seed), folder)


def assert_same_backtest(one, other) -> None:
    pd.testing.assert_frame_equal(one.table, other.table, check_exact=True)
    pd.testing.assert_index_equal(one.origins, other.origins, exact=True)
    assert one.residuals.keys() == other.residuals.keys()
    for name in one.residuals:
        np.testing.assert_array_equal(one.residuals[name], other.residuals[name])
    assert one.n_paths == other.n_paths


def entries(folder: Path) -> list[Path]:
    return sorted(folder.glob("*"))


def test_a_repeated_backtest_is_read_from_the_cache_with_the_same_numbers(history, tmp_path):
    first = backtest(history, tmp_path)
    assert not first.from_cache and len(entries(tmp_path)) == 1
    second = backtest(history, tmp_path)
    assert second.from_cache
    assert_same_backtest(first, second)
    assert_same_backtest(first, backtest(history, None))  # no cache at all


def test_the_forecast_is_the_same_with_and_without_the_cache(history, tmp_path):
    settings = replace(QUICK, residuals="backtest")
    plain = forecast_admissions(history, settings, HORIZON, 200, np.random.default_rng(3))
    stored = forecast_admissions(
        history, settings, HORIZON, 200, np.random.default_rng(3), None, tmp_path
    )
    read = forecast_admissions(
        history, settings, HORIZON, 200, np.random.default_rng(3), None, tmp_path
    )
    assert not stored.summary.backtest.from_cache and read.summary.backtest.from_cache
    for result in (stored, read):
        np.testing.assert_array_equal(result.paths, plain.paths)
        assert result.summary.strategy == plain.summary.strategy
        assert result.summary.backtest_pinball == plain.summary.backtest_pinball
        assert_same_backtest(result.summary.backtest, plain.summary.backtest)


def key(history, settings=QUICK, horizon=HORIZON, n_paths=100, rng=None):
    """The key run_backtest looks up for these arguments."""
    dates = pd.DatetimeIndex(history.index)
    terms = terms_for_history(settings, dates, history.to_numpy(float))
    inputs = BacktestInputs.build(
        history.to_numpy(float), dates, terms, horizon, observed_columns(terms, dates)
    )
    rng = np.random.default_rng(0).spawn(3)[0] if rng is None else rng
    return cache.backtest_key(inputs, settings, n_paths, rng)


@pytest.mark.parametrize(
    "change",
    [
        {"max_lag": 6},
        {"criterion": "bic"},
        {"order": 3},
        {"refit": True},
        {"refit_series": 20},
        {"backtest_origins": 4},
        {"backtest_every": 6},
        {"backtest_paths": 39},
        {"weekday": False},
        {"trend": True},
        {"annual": True},
        {"holiday_dates": (pd.Timestamp("2024-12-25").date(),)},
    ],
    ids=lambda change: next(iter(change)),
)
def test_the_key_changes_with_every_setting_the_backtest_reads(history, change):
    assert key(history, replace(QUICK, **change)) != key(history)


def test_the_key_changes_with_the_history_horizon_paths_and_stream(history):
    base = key(history)
    changed = history.copy()
    changed.iloc[100] += 1
    shifted = pd.Series(history.to_numpy(), index=history.index + pd.Timedelta(days=7))
    assert key(changed) != base
    assert key(shifted) != base  # the same counts on other dates
    assert key(history.iloc[1:]) != base
    assert key(history, horizon=HORIZON + 1) != base
    assert key(history, n_paths=30) != base  # fewer than backtest_paths: fewer paths drawn
    assert key(history, n_paths=1000) == base  # more: backtest_paths are drawn either way
    for other in (
        np.random.default_rng(1).spawn(3)[0],  # another seed
        np.random.default_rng(0).spawn(3)[1],  # another stream of the same seed
        np.random.default_rng(0),  # the parent stream
    ):
        assert key(history, rng=other) != base
    assert key(history.copy()) == base  # the content counts, not the object or its file


def test_settings_the_backtest_does_not_read_are_not_in_the_key(history):
    others = [
        replace(QUICK, strategy="direct"),
        replace(QUICK, residuals="backtest"),
        replace(QUICK, demand=DemandAdjustment(growth=0.1)),
    ]
    for settings in others:
        assert key(history, settings) == key(history)
        # and rightly so: the backtest is the same without any cache
        assert_same_backtest(backtest(history, None, settings), backtest(history, None))


def test_a_damaged_entry_is_ignored_and_replaced(history, tmp_path):
    first = backtest(history, tmp_path)
    (entry,) = entries(tmp_path)
    entry.write_bytes(b"not an npz file")
    again = backtest(history, tmp_path)
    assert not again.from_cache
    assert_same_backtest(first, again)
    assert backtest(history, tmp_path).from_cache  # the entry was written anew


def test_an_entry_made_for_another_key_is_ignored(history, tmp_path):
    backtest(history, tmp_path, seed=1)
    (entry,) = entries(tmp_path)
    shutil.copy(entry, cache.entry_path(tmp_path, key(history)))
    assert not backtest(history, tmp_path, seed=0).from_cache


def test_a_cache_folder_that_cannot_be_written_is_not_used(history, tmp_path):
    blocked = tmp_path / "file"
    blocked.write_text("a file where the folder should be")
    result = backtest(history, blocked)
    assert not result.from_cache
    assert_same_backtest(result, backtest(history, None))
    assert not backtest(history, blocked).from_cache


def test_entries_are_written_whole_and_the_oldest_go_first(history, tmp_path, monkeypatch):
    monkeypatch.setattr(cache, "MOST_ENTRIES", 2)
    for seed in (1, 2, 3):
        backtest(history, tmp_path, seed=seed)
    names = [path.name for path in entries(tmp_path)]
    assert len(names) == 2 and all(name.endswith(".npz") for name in names)  # no temporary files
    assert not backtest(history, tmp_path, seed=1).from_cache
    assert backtest(history, tmp_path, seed=3).from_cache


def test_the_cache_folder_comes_from_the_environment(tmp_path, monkeypatch):
    monkeypatch.setenv("PLANNER_CACHE", str(tmp_path / "mine"))
    assert cache.cache_folder() == tmp_path / "mine"
    monkeypatch.setenv("PLANNER_CACHE", "")
    assert cache.cache_folder() is None
    monkeypatch.delenv("PLANNER_CACHE")
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path / "xdg"))
    assert cache.cache_folder() == tmp_path / "xdg" / "planner"
    monkeypatch.delenv("XDG_CACHE_HOME")
    monkeypatch.setenv("HOME", str(tmp_path / "home"))
    assert cache.cache_folder() == tmp_path / "home" / ".cache" / "planner"


def copy_of_demo(folder: Path) -> Path:
    shutil.copytree(DEMO / "data", folder / "data")
    shutil.copy(DEMO / "baseline.toml", folder / "baseline.toml")
    return folder / "baseline.toml"


def test_the_backtest_of_a_copied_history_is_reused_and_the_output_says_so(tmp_path):
    one, other = copy_of_demo(tmp_path / "one"), copy_of_demo(tmp_path / "other")
    runner = CliRunner()
    arguments = ["--paths", "20", "--overwrite"]
    first = runner.invoke(cli, ["backtest", str(one), "--out", str(tmp_path / "a"), *arguments])
    second = runner.invoke(cli, ["backtest", str(other), "--out", str(tmp_path / "b"), *arguments])
    assert first.exit_code == 0 and second.exit_code == 0, first.output + second.output
    assert CACHED_BACKTEST not in first.output
    assert CACHED_BACKTEST in second.output
    written = [(tmp_path / name / "backtest.csv").read_bytes() for name in ("a", "b")]
    assert written[0] == written[1]


def test_planner_run_says_when_it_reused_the_backtest(tmp_path):
    runner = CliRunner()
    outputs = []
    for name in ("first", "second"):
        result = runner.invoke(
            cli, ["run", "--paths", "40", "--jobs", "1", "--out", str(tmp_path / name)]
        )
        assert result.exit_code == 0, result.output
        outputs.append((result.output, (tmp_path / name / "report.html").read_text()))
    (terminal, page), (terminal_again, page_again) = outputs
    assert CACHED_BACKTEST not in terminal and CACHED_BACKTEST not in page
    assert CACHED_BACKTEST in terminal_again and CACHED_BACKTEST in page_again
    for table in ("weekly.csv", "daily.csv", "shifts.csv", "forecast.csv"):
        assert (tmp_path / "first" / table).read_bytes() == (
            tmp_path / "second" / table
        ).read_bytes()

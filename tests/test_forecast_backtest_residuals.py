"""Backtest error paths for the direct strategy (``residuals = "backtest"``): every origin's
errors, the days past the end of the history filled from other origins, and the refusal of too
few paths."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from planner.errors import PlannerError
from planner.forecast.bootstrap import direct_paths
from planner.forecast.pipeline import forecast_admissions, run_backtest
from planner.forecast.settings import LEAST_ERROR_PATHS, ForecastSettings
from planner.scenario import load_scenario

HORIZON = 28


@pytest.fixture(scope="module")
def history() -> pd.Series:
    rng = np.random.default_rng(8)
    dates = pd.date_range("2024-01-01", periods=800, freq="D")
    weekend = np.where(dates.day_of_week >= 5, 0.8, 1.0)
    return pd.Series(rng.poisson(12.0 * weekend), index=dates, name="admissions")


def test_every_origin_gives_an_error_path(history):
    settings = ForecastSettings(max_lag=7, backtest_origins=60, backtest_every=3)
    backtest = run_backtest(history, settings, HORIZON, 50, np.random.default_rng(1))
    errors = backtest.residuals["direct"]
    # Origins 3k days before the end, k = 60 .. 1, observe min(28, 3k) days (counted by hand
    # from the origin rule): 60 error paths, of which the 51 with 3k >= 28 are whole; before,
    # only those 51 were kept.
    assert errors.shape == (60, HORIZON)
    observed = (~np.isnan(errors)).sum(axis=1)
    np.testing.assert_array_equal(observed, np.minimum(HORIZON, 3 * np.arange(60, 0, -1)))
    assert int((observed == HORIZON).sum()) == 51
    # Each observed error is the day's admissions minus the direct forecast: never NaN there.
    assert not np.isnan(errors[:, 0]).any()


def test_unobserved_days_are_drawn_from_the_origins_that_observed_them():
    # Five error paths over 3 days: rows 1-3 whole, row 4 observed 2 days, row 5 one day.
    rows = np.array(
        [
            [1.0, 10.0, 100.0],
            [2.0, 20.0, 200.0],
            [3.0, 30.0, 300.0],
            [4.0, 40.0, np.nan],
            [5.0, np.nan, np.nan],
        ]
    )
    n = 30000
    paths = direct_paths(np.zeros(3), rows, n, np.random.default_rng(2))
    assert not np.isnan(paths).any()
    # A path keeps its own row where the row observed the day (day 1 names the row) ...
    first = paths[:, 0].astype(int)
    mine = first <= 4
    np.testing.assert_array_equal(paths[mine, 1], 10.0 * first[mine])
    # ... and takes a day it did not observe from a row that did, uniformly: day 2 of row 5
    # from rows 1-4 (1/4 each), day 3 of rows 4-5 from rows 1-3 (1/3 each). Multinomial SE
    # sqrt(p (1 - p) / count); asked within 4 SE.
    day2 = paths[first == 5, 1]
    for value in (10.0, 20.0, 30.0, 40.0):
        share, se = np.mean(day2 == value), np.sqrt(0.25 * 0.75 / day2.shape[0])
        assert share == pytest.approx(0.25, abs=4 * se)
    day3 = paths[first >= 4, 2]
    for value in (100.0, 200.0, 300.0):
        share, se = np.mean(day3 == value), np.sqrt(2 / 9 / day3.shape[0])
        assert share == pytest.approx(1 / 3, abs=4 * se)
    # Rows 1-3 are whole: their paths are their rows.
    whole = first <= 3
    np.testing.assert_array_equal(paths[whole, 2], 100.0 * first[whole])


def test_too_few_error_paths_are_refused(history, tmp_path):
    assert LEAST_ERROR_PATHS == 50
    settings = ForecastSettings(
        strategy="direct", residuals="backtest", max_lag=7, backtest_origins=20
    )
    with pytest.raises(PlannerError) as error:
        forecast_admissions(history, settings, HORIZON, 50, np.random.default_rng(3))
    message = str(error.value)
    assert message.startswith('forecast.residuals: "backtest" with the direct strategy needs ')
    assert "the backtest has 20" in message
    assert message.endswith(
        "give a longer history or more backtest origins (forecast.backtest_origins)"
    )
    # A scenario asking for the direct strategy is refused when it is read.
    (tmp_path / "ward.csv").write_text("date,admissions\n2026-01-01,3\n")
    plan = tmp_path / "plan.toml"
    plan.write_text(
        '[forecast]\nstrategy = "direct"\nresiduals = "backtest"\nbacktest_origins = 20\n'
        '[history]\nadmissions = "ward.csv"\n[stay]\nmean = 5.0\nsd = 4.0\n'
    )
    with pytest.raises(PlannerError) as error:
        load_scenario(plan)
    assert str(error.value).startswith(f"{plan}: forecast.backtest_origins: ")
    assert "needs at least 50, got 20" in str(error.value)

"""The forecast with its defaults on known processes generated here (fixed seeds, three years of
daily admissions): Poisson with a weekday and an annual pattern, negative binomial with growth,
a +25% level change 8 weeks before the origin (declared, and undeclared for the drift alarm)
and a low-count ward of about 2 admissions a day.

Each forecast (28 days, 1,000 paths) is scored against the true distribution of every day,
which is known exactly: Poisson, or negative binomial with size k (variance mu + mu^2 / k).
* Pinball loss: the expected loss under the true distribution of the forecast's quantiles
  (levels 0.05 .. 0.95) over that of the true quantiles, which minimise it; the mean ratio must
  be below 1.03 (the forecast within 3% of the truth's own quantiles). Taking the expectation
  over the known distribution, not one drawn day, leaves only the history's and the paths'
  randomness in the ratio.
* Coverage: the central 80% band [q10, q90] of each day (and of each 7-day total) is scored on
  drawn outcomes, pooled over days, origins and histories. Counts are whole numbers, so the band
  holds more than 80% of the forecast's own paths; a calibrated forecast covers that share
  (``nominal``), averaged over the scored days. Given the bands the outcomes are independent
  (the processes have independent days), so the pooled coverage has the binomial SE
  sqrt(sum c (1 - c)) / N with c the nominal shares; asked: within 3 SE. The 7-day totals are
  scored alike (4 a forecast).

Fast versions run 1 history x 2 rolling origins (4 weeks apart) per process with a smaller
backtest (8 origins of 100 paths); the slow ones 12 histories x 2 origins with the defaults
(measured, slow: pinball ratios 1.013, 1.010, 1.025 and 1.008; pooled daily coverage minus
nominal -0.018, -0.023, -0.027 and +0.001, SE about 0.015; weekly -0.012, -0.019, -0.010 and
-0.030, SE about 0.04: the bands run a little narrow, within the Monte Carlo error).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from level_change_data import WEEKDAY_MEANS
from scipy import stats

from planner.forecast.pipeline import forecast_admissions
from planner.forecast.result import QUANTILE_LEVELS
from planner.forecast.settings import ForecastSettings, LevelChange

HORIZON, PATHS, HISTORY_DAYS = 28, 1000, 3 * 364
START = pd.Timestamp("2023-01-02")  # a Monday
WEEKDAY_SHAPE = WEEKDAY_MEANS / WEEKDAY_MEANS.mean()
CHANGE_WEEKS = 8


def expected(process: str, dates: pd.DatetimeIndex, change=None) -> np.ndarray:
    """True mean admissions per day. Source: known processes generated here."""
    weekday = WEEKDAY_SHAPE[dates.day_of_week]
    years = ((dates - START) / pd.Timedelta(days=365.25)).to_numpy(float)
    if process == "poisson_seasonal":
        return 20.0 * weekday * (1 + 0.15 * np.cos(2 * np.pi * (dates.day_of_year - 15) / 365.25))
    if process == "negative_binomial_growth":
        return 20.0 * weekday * 1.05**years
    if process == "level_change":
        return 20.0 * weekday * np.where(dates >= change, 1.25, 1.0)
    return 2.0 * weekday  # low_count


#: Negative binomial size k of each process (None: Poisson).
SIZE = {"negative_binomial_growth": 20.0}


def distribution(process: str, mean):
    k = SIZE.get(process)
    if k is None:
        return stats.poisson(mean)
    return stats.nbinom(k, k / (k + np.asarray(mean)))


def expected_pinball(dist, quantiles: np.ndarray) -> np.ndarray:
    """E[pinball loss] of ``quantiles`` (days x levels) under the frozen distribution ``dist``
    of each day, summed over the whole support."""
    support = np.arange(int(np.max(dist.ppf(1 - 1e-10))) + 2)
    probabilities = dist.pmf(support[:, None]).T[:, :, None]  # days x y x 1
    support = support[None, :, None]
    levels = np.array(QUANTILE_LEVELS)[None, None, :]
    q = quantiles[:, None, :]
    loss = np.where(support >= q, levels * (support - q), (1 - levels) * (q - support))
    return np.sum(probabilities * loss, axis=1)


#: Fast versions' backtest: 8 weekly origins of 100 paths (defaults: 26 of 200).
QUICK = {"backtest_origins": 8, "backtest_paths": 100}


def run(process: str, seed: int, origin_shift: int, declare: bool = True, options=None):
    """One forecast from a history of HISTORY_DAYS days ending ``origin_shift`` days early, with
    the default settings (and ``options``); returns the forecast, the true means of its days,
    the drawn outcomes and the date of the level change (used by "level_change" only)."""
    rng = np.random.default_rng(seed)
    dates = pd.date_range(START, periods=HISTORY_DAYS + HORIZON + 28, freq="D")
    origin = HISTORY_DAYS + 28 - origin_shift
    change = dates[origin] - pd.Timedelta(weeks=CHANGE_WEEKS)
    mean = expected(process, dates, change)
    counts = distribution(process, mean).rvs(random_state=rng)
    history = pd.Series(counts[:origin], index=dates[:origin], name="admissions")
    changes = (LevelChange(change.date()),) if process == "level_change" and declare else ()
    settings = ForecastSettings(level_changes=changes, **(options or {}))
    result = forecast_admissions(history, settings, HORIZON, PATHS, np.random.default_rng(seed))
    days = slice(origin, origin + HORIZON)
    return result, mean[days], counts[days], change


def scores(process: str, seeds, origins=(0, 28), options=None) -> dict[str, float]:
    ratios, daily, weekly = [], [], []
    for seed in seeds:
        for shift in origins:
            result, mean, outcome, _ = run(process, seed, shift, options=options)
            paths = result.paths
            truth = distribution(process, mean)
            quantiles = np.quantile(paths, QUANTILE_LEVELS, axis=0).T
            best = truth.ppf(np.array(QUANTILE_LEVELS)[:, None]).T  # the true quantiles
            ratios.append(
                expected_pinball(truth, quantiles).mean() / expected_pinball(truth, best).mean()
            )
            daily.append(band(paths, outcome))
            totals = paths.reshape(PATHS, -1, 7).sum(axis=2)
            weekly.append(band(totals, outcome.reshape(-1, 7).sum(axis=1)))
    return {
        "pinball_ratio": float(np.mean(ratios)),
        "daily": pooled(daily),
        "weekly": pooled(weekly),
    }  # noqa: E501


def band(paths: np.ndarray, outcome: np.ndarray):
    """(outcome inside [q10, q90], the paths' own share inside) for each day or week."""
    low, high = np.quantile(paths, [0.1, 0.9], axis=0)
    nominal = ((paths >= low) & (paths <= high)).mean(axis=0)
    return (outcome >= low) & (outcome <= high), nominal


def pooled(records) -> tuple[float, float, float]:
    """(coverage, nominal, binomial SE) pooled over every scored day or week."""
    inside = np.concatenate([r[0] for r in records])
    nominal = np.concatenate([r[1] for r in records])
    se = np.sqrt(np.sum(nominal * (1 - nominal))) / nominal.shape[0]
    return float(inside.mean()), float(nominal.mean()), float(se)


def check(found: dict, pinball_bound: float = 1.03) -> None:
    # Source: known process generated here; tolerances in the module docstring.
    assert found["pinball_ratio"] < pinball_bound, found
    for horizon in ("daily", "weekly"):
        coverage, nominal, se = found[horizon]
        assert abs(coverage - nominal) < 3 * se, (horizon, found)


PROCESSES = ["poisson_seasonal", "negative_binomial_growth", "level_change", "low_count"]


@pytest.mark.parametrize("process", PROCESSES)
def test_known_process_fast(process):
    # One history: its ratio varies about the mean the slow test bounds by 3%, with an SD
    # across histories measured at 0.005 - 0.011 (the slow version's 12 histories, 2 origins
    # each); asked below 1.03 + 3 x 0.011.
    check(scores(process, seeds=range(1), options=QUICK), pinball_bound=1.03 + 3 * 0.011)


@pytest.mark.slow
@pytest.mark.parametrize("process", PROCESSES)
def test_known_process(process):
    check(scores(process, seeds=range(100, 112)))


def test_an_undeclared_change_trips_the_drift_alarm_within_3_weeks():
    # Source: known process generated here: +25% (about 1.1 standard deviations of a day)
    # 8 weeks before the origin, not declared. Siegmund's approximation (REFERENCES.md) gives
    # an average run length of about 9 days for this shift with k = 0.5, h = 5. Every one of
    # 3 histories must signal "above" within 21 days of the change.
    for seed in range(3):
        result, _, _, change = run("level_change", seed, 0, declare=False, options=QUICK)
        alarm = result.summary.drift
        assert alarm is not None and alarm.direction == "above"
        assert change <= alarm.signalled <= change + pd.Timedelta(days=20), (seed, alarm)

"""Rolling-origin backtest with a refit at each origin.

Origins are the first forecast days ``n - every * k`` for ``k = origins .. 1`` (default: 26
weekly origins over the last 26 weeks). At each origin the whole procedure is rerun on the days
before it: order choice, fit, bootstrap paths (``settings.backtest_paths`` of them, rounded to
counts like the forecast), for each strategy (recursive, direct, seasonal naive). The set of
deterministic columns is fixed once from the whole history; their coefficients are refitted.

Origins whose target window runs past the end of the history are truncated: they are scored on
the days that are observed, so late horizon weeks are scored on fewer origins (column ``days``).
Origins leaving too little training data for a direct fit (and at least ``max_lag + H + 30``
days, see :mod:`planner.forecast.requirements`) are skipped.
The backtest's own paths use in-sample residuals and ignore demand adjustments: it scores the
model, not the scenario. A level change inside the history is a step column of every origin
whose training data reach its date (at least one day at the new level); at earlier origins it
is left out, the change not yet being in their data, and its stated size is not applied.

MAE and RMSE score the paths' mean; MASE scales each origin's absolute errors by that origin's
training-data seasonal naive error (m = 7); pinball loss averages the levels 0.05 .. 0.95;
coverage_80 / interval_score_80 use the 0.1 and 0.9 quantiles, coverage_95 the 0.025 and 0.975.
Admissions are whole numbers, so the interval [q10, q90] holds more than 80% of the model's own
paths (all of the paths on its end points count); ``nominal_80`` is that share, averaged over
the scored days: a calibrated model has coverage_80 close to nominal_80, not to 0.80.

Out-of-sample residuals for ``residuals="backtest"``: recursive, the one-step errors on every
day of the window (the fit of the latest origin predicting each day from the observed lags);
direct, the error paths (actual minus direct point forecast, h = 1 .. H) of every origin, those
whose horizon runs past the end of the history with NaN on the days not observed (the paths
fill them from other origins: :func:`planner.forecast.bootstrap.direct_paths`).
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np
import pandas as pd

from planner.errors import PlannerError
from planner.forecast import metrics
from planner.forecast.ar import ArFit, design
from planner.forecast.bootstrap import to_counts
from planner.forecast.deterministic import step_columns
from planner.forecast.paths import STRATEGIES, SeriesDesign, model_paths, one_step_fit
from planner.forecast.requirements import origin_days
from planner.forecast.result import QUANTILE_LEVELS, BacktestResult
from planner.forecast.spread import chosen_spread, one_step_pinball

SCORED_LEVELS = (0.025,) + QUANTILE_LEVELS + (0.975,)
COLUMNS = [
    "strategy",
    "horizon_week",
    "days",
    "mae",
    "rmse",
    "mase",
    "pinball",
    "coverage_80",
    "coverage_95",
    "interval_score_80",
    "nominal_80",
]


def origin_positions(n: int, settings, horizon: int) -> np.ndarray:
    """0-based positions of the first forecast day of each usable origin, ascending: those
    with the training days :func:`planner.forecast.requirements.origin_days` asks for."""
    if settings.backtest_origins < 1 or settings.backtest_every < 1:
        raise PlannerError("backtest_origins and backtest_every must be >= 1")
    positions = n - settings.backtest_every * np.arange(settings.backtest_origins, 0, -1)
    usable = positions[positions >= origin_days(settings, horizon, n)[0]]
    if usable.shape[0] == 0:
        raise PlannerError(
            f"history: {n} days are too few for a backtest at horizon {horizon} "
            f"with max_lag {settings.max_lag}"
        )
    return usable


@dataclass(frozen=True)
class BacktestInputs:
    """The data a backtest reads: ``values`` (admissions per day on ``dates``), the
    deterministic columns ``names`` and their values over the history and the ``horizon``
    days after it (``deterministic``, one row per day, ``len(dates) + horizon`` rows)."""

    values: np.ndarray
    dates: pd.DatetimeIndex
    names: tuple[str, ...]
    deterministic: np.ndarray
    horizon: int

    @classmethod
    def build(cls, values, dates, terms, horizon: int, columns=None) -> BacktestInputs:
        """From deterministic ``terms`` (only ``columns`` of them if given, e.g. without a
        holiday column that is empty in sample)."""
        values = np.asarray(values, dtype=float)
        extended = pd.date_range(dates[0], periods=values.shape[0] + horizon, freq="D")
        names = tuple(terms.names) if columns is None else tuple(columns)
        deterministic = terms.in_sample(extended)[list(names)].to_numpy()
        return cls(values, pd.DatetimeIndex(dates), names, deterministic, horizon)

    def columns_at(self, origin: int) -> list[int] | None:
        """Deterministic columns of the fits at ``origin`` (position of its first forecast
        day): all but the level changes' steps that are zero on every training day; None for
        all of them."""
        steps = step_columns(self.names)
        late = [j for j in steps if not self.deterministic[:origin, j].any()]
        if not late:
            return None
        return [j for j in range(len(self.names)) if j not in late]


def backtest_path_count(n_paths: int, settings) -> int:
    """Paths per origin and strategy: the smaller of the run's and ``backtest_paths``."""
    return max(1, min(n_paths, settings.backtest_paths))


def backtest_inputs(
    inputs: BacktestInputs, settings, n_paths: int, rng: np.random.Generator
) -> BacktestResult:
    """The rolling-origin backtest on ``inputs`` (:class:`BacktestInputs`: the history, its
    calendar terms over the history and the horizon, and the horizon). With ``spread = "auto"``
    the one-step fits of every origin choose the spread first
    (:func:`planner.forecast.spread.one_step_pinball`), then the paths use it."""
    values, dates, horizon = inputs.values, inputs.dates, inputs.horizon
    n = values.shape[0]
    positions = origin_positions(n, settings, horizon)
    n_paths = backtest_path_count(n_paths, settings)
    origins = [_OriginFit.build(inputs, origin, settings) for origin in positions]
    one_step_errors = [fit.one_step_errors(values, settings.backtest_every) for fit in origins]
    spread_pinball = {}
    if settings.spread == "auto":
        records = [
            (
                values[: fit.origin],
                fit.one_step.residuals,
                values[fit.origin : fit.origin + e.size],
                values[fit.origin : fit.origin + e.size] - e,
            )
            for fit, e in zip(origins, one_step_errors, strict=True)
        ]
        spread_pinball = one_step_pinball(records)
        settings = replace(settings, spread=chosen_spread(spread_pinball))
    scored = {strategy: [] for strategy in STRATEGIES}
    direct_errors: list[np.ndarray] = []
    for fit, origin_rng in zip(origins, rng.spawn(len(positions)), strict=True):
        origin = fit.origin
        training, observed = values[:origin], values[origin : origin + horizon]
        scale = metrics.mase_scale(training)
        for strategy, strategy_rng in zip(STRATEGIES, origin_rng.spawn(3), strict=True):
            path_rng = strategy_rng.spawn(2)[0]  # (the second stream drew the rounding once)
            series = SeriesDesign(
                training,
                fit.deterministic[:origin],
                fit.deterministic[origin : origin + horizon],
                fit.names,
            )
            result = model_paths(
                strategy, series, settings, n_paths, path_rng, one_step=fit.one_step
            )
            counts = to_counts(result.paths[:, : observed.shape[0]])
            quantiles = np.quantile(counts, SCORED_LEVELS, axis=0).T
            inside = (counts >= quantiles[:, 2]) & (counts <= quantiles[:, 6])
            scored[strategy].append(
                (observed, counts.mean(axis=0), quantiles, scale, inside.mean(axis=0))
            )
            if strategy == "direct":
                errors = np.full(horizon, np.nan)
                errors[: observed.shape[0]] = observed - result.point[: observed.shape[0]]
                direct_errors.append(errors)
    rows = [row for strategy in STRATEGIES for row in _score(strategy, scored[strategy], horizon)]
    residuals = {
        "recursive": np.concatenate(one_step_errors),
        "direct": np.array(direct_errors).reshape(len(direct_errors), horizon),
    }
    return BacktestResult(
        table=pd.DataFrame(rows, columns=COLUMNS),
        origins=pd.DatetimeIndex(dates[positions]),
        residuals=residuals,
        n_paths=n_paths,
        spread=settings.spread,
        spread_pinball=spread_pinball,
    )


@dataclass(frozen=True)
class _OriginFit:
    """One origin's one-step model: fitted on the days before ``origin`` with the deterministic
    columns ``names`` (``deterministic`` over the history and the horizon)."""

    origin: int
    names: tuple[str, ...]
    deterministic: np.ndarray
    one_step: ArFit

    @classmethod
    def build(cls, inputs: BacktestInputs, origin: int, settings) -> _OriginFit:
        columns = inputs.columns_at(origin)
        deterministic, names = inputs.deterministic, inputs.names
        if columns is not None:
            deterministic = deterministic[:, columns]
            names = tuple(names[j] for j in columns)
        design_ = SeriesDesign(inputs.values[:origin], deterministic[:origin], None, names)
        return cls(int(origin), names, deterministic, one_step_fit(design_, settings))

    def one_step_errors(self, values: np.ndarray, every: int) -> np.ndarray:
        """Errors of the one-step model on the days from the origin to the next one (or the end
        of the history), each predicted from the observed lags."""
        end = min(self.origin + every, values.shape[0])
        X, y = design(values[:end], self.one_step.order, self.deterministic[:end])
        days = end - self.origin
        return y[-days:] - X[-days:] @ self.one_step.coefficients


def _score(strategy: str, records, horizon: int) -> list[tuple]:
    actual = np.concatenate([r[0] for r in records])
    mean = np.concatenate([r[1] for r in records])
    quantiles = np.vstack([r[2] for r in records])
    scale = np.concatenate([np.full(r[0].shape[0], r[3]) for r in records])
    week = np.concatenate([np.arange(r[0].shape[0]) // 7 + 1 for r in records])
    nominal = np.concatenate([r[4] for r in records])
    rows = []
    for horizon_week in [0] + list(range(1, (horizon + 6) // 7 + 1)):
        keep = week == horizon_week if horizon_week else np.ones(actual.shape[0], bool)
        if not keep.any():
            continue
        y, q = actual[keep], quantiles[keep]
        rows.append(
            (
                strategy,
                horizon_week,
                int(keep.sum()),
                metrics.mae(y, mean[keep]),
                metrics.rmse(y, mean[keep]),
                float(np.mean(np.abs(y - mean[keep]) / scale[keep])),
                metrics.pinball_loss(y, q[:, 1:-1], QUANTILE_LEVELS),
                metrics.coverage(y, q[:, 2], q[:, 6]),
                metrics.coverage(y, q[:, 0], q[:, -1]),
                metrics.interval_score(y, q[:, 2], q[:, 6], alpha=0.2),
                float(nominal[keep].mean()),
            )
        )
    return rows

"""Forecasts of several wards drawn together, so that a busy day for the hospital is busy on
several wards in the same path.

Each ward is forecast as :func:`planner.forecast.pipeline.forecast_admissions` forecasts it
alone (its own backtest, order, strategy, spread, level changes, demand adjustments and
rounding to counts) except for which resampled residuals its paths take. Those are chosen once
for all the wards:

- recursive strategy: day ``d`` of path ``i`` takes, on every recursive ward, the one-step
  residual of the SAME past day, drawn among the days all their pools hold (the common days);
- direct strategy: path ``i`` takes, on every direct ward, the error path of the SAME past
  origin, drawn among the origins all their pools hold; a forecast day that origin did not
  observe on some ward (an origin near the end of the history, with backtest residuals) takes,
  on every direct ward, the error of one other common origin that observed it on all of them.

Why: the wards' residuals of one day hold the hospital's common movement on that day (a busy
week of respiratory illness, a cold snap, a neighbour's closed emergency department) as it
happened. Resampling them by day keeps their joint distribution, its cross-ward correlation
and its joint tails, without a model of the dependence; each ward still feeds its shocks
through its own lags and scales them by its own level. Source: the residual bootstrap of a
vector autoregression resamples the residual vectors of whole days (Luetkepohl, New
Introduction to Multiple Time Series Analysis, 2005, appendix D; from memory).

The draws: one stream (the first child of ``rng``) gives uniforms ``U`` (paths x days) for the
recursive wards' days, ``V`` (paths) for the direct wards' origins and ``W`` (paths x days) for
the days an origin did not observe, always in that order, so a ward's draws do not depend on
the other strategy's wards. A uniform ``u`` picks ``C[floor(u len(C))]`` of the common dates
``C`` (oldest first) and each ward takes its own row of that date. Every other draw is the
ward's own: ward ``k`` runs the pipeline on child ``k + 1`` of ``rng`` (its backtest; the level
steps' and trend's coefficients; with ``refit``, the rebuilt histories, from a child of its
paths' stream).

Not kept:

- the correlation of parameter uncertainty: the wards' coefficient draws and refits are
  independent, though their estimation errors are correlated through the shared days of their
  histories; only the forward shocks are shared;
- the correlation between the strategy groups: a recursive ward takes a past day for each
  forecast day, a direct ward one past origin for the whole path, so the two cannot share a
  draw; when wards differ in strategy, each group is drawn together and the groups
  independently, and :attr:`JointForecast.note` says so. To avoid that, the wards whose
  strategy is "auto" take ONE strategy: the one whose backtest pinball loss, added over those
  wards, is lower (the hospital's total error; :func:`one_strategy`); a ward given a strategy
  keeps it;
- each ward's own pool: it resamples only the common dates (its oldest residuals, or origins,
  are left out when another ward's pool is shorter).

Refused (:class:`planner.errors.PlannerError`): histories that do not end on the same day (the
same day counted back would not be the same date), and, for two or more wards sharing draws,
fewer common dates than :data:`LEAST_COMMON_DAYS` (recursive) or :data:`LEAST_COMMON_ORIGINS`
(direct).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, replace
from functools import reduce
from pathlib import Path

import numpy as np
import pandas as pd

from planner.errors import PlannerError
from planner.forecast.paths import model_paths, one_step_fit, pool_rows
from planner.forecast.pipeline import finish_forecast, plan_forecast
from planner.forecast.result import ForecastResult
from planner.forecast.rows import PoolRows, SharedRows
from planner.forecast.settings import LEAST_ERROR_PATHS, ForecastSettings

#: Fewest days of one-step residuals recursive wards drawn together must share: eight weeks,
#: each weekday eight times (a judgement, not a published figure).
LEAST_COMMON_DAYS = 56
#: Fewest error-path origins direct wards drawn together must share: as many as a single
#: ward's direct forecast with backtest residuals asks for.
LEAST_COMMON_ORIGINS = LEAST_ERROR_PATHS


@dataclass(frozen=True)
class JointForecast:
    """Forecasts of several wards drawn together: ``results``, one per history in their order;
    ``note``, one sentence on a correlation the draws could not keep ("" when none)."""

    results: tuple[ForecastResult, ...]
    note: str = ""


@dataclass(frozen=True)
class SharedUniforms:
    """The uniforms all wards' rows are chosen by: ``days`` (U, paths x days) the recursive
    wards' residual days, ``origins`` (V, paths) the direct wards' origins, ``fills`` (W, paths
    x days) the origins of days a path's origin did not observe."""

    days: np.ndarray
    origins: np.ndarray
    fills: np.ndarray

    @classmethod
    def draw(cls, rng: np.random.Generator, n_paths: int, days: int) -> SharedUniforms:
        """U, V and W from ``rng``, in that order."""
        return cls(rng.random((n_paths, days)), rng.random(n_paths), rng.random((n_paths, days)))


def forecast_wards(
    histories: Sequence[pd.Series],
    settings: Sequence[ForecastSettings],
    horizon: int,
    n_paths: int,
    rng: np.random.Generator,
    start: pd.Timestamp | None = None,
    cache: Path | None = None,
) -> JointForecast:
    """Sample paths of several wards' daily emergency admissions for ``horizon`` days from
    ``start``, drawn together (module docstring); ``histories[k]`` is forecast with
    ``settings[k]``, the other arguments as in
    :func:`planner.forecast.pipeline.forecast_admissions`."""
    histories, settings = list(histories), list(settings)
    end = _common_end(histories, settings)
    shared_rng, *ward_rngs = rng.spawn(len(histories) + 1)
    plans = [
        plan_forecast(history, ward_settings, horizon, n_paths, ward_rng, start, cache)
        for history, ward_settings, ward_rng in zip(histories, settings, ward_rngs, strict=True)
    ]
    plans = one_strategy(plans, [ward.strategy for ward in settings])
    fits = [one_step_fit(plan.design, plan.settings) for plan in plans]
    pools = [
        pool_rows(plan.strategy, plan.design, fit, plan.errors)
        for plan, fit in zip(plans, fits, strict=True)
    ]
    uniforms = SharedUniforms.draw(shared_rng, n_paths, plans[0].future_dates.shape[0])
    chosen = shared_choices(pools, uniforms, end)
    results = []
    for plan, fit, pool in zip(plans, fits, pools, strict=True):
        rows = SharedRows(pool, chosen[pool.kind], plan.path_rng)
        paths = model_paths(
            plan.strategy,
            plan.design,
            plan.settings,
            n_paths,
            plan.path_rng,
            one_step=fit,
            errors=plan.errors,
            rows=rows,
        )
        results.append(finish_forecast(plan, paths))
    return JointForecast(tuple(results), _note(strategy_groups(pools)))


def one_strategy(plans: list, asked: list[str]) -> list:
    """``plans`` with one strategy for every ward whose ``asked`` strategy is "auto": the one
    with the lower backtest pinball loss added over those wards (recursive on a tie). A
    direct forecast with backtest residuals and too few error paths stays recursive."""
    auto = [k for k, strategy in enumerate(asked) if strategy == "auto"]
    if len({plans[k].strategy for k in auto}) < 2:
        return plans
    total = {name: sum(plans[k].pinball[name] for k in auto) for name in ("recursive", "direct")}
    chosen = "recursive" if total["recursive"] <= total["direct"] else "direct"
    if chosen == "direct" and any(
        plans[k].errors is not None and plans[k].errors.paths.shape[0] < LEAST_ERROR_PATHS
        for k in auto
    ):
        chosen = "recursive"
    return [replace(plan, strategy=chosen) if k in auto else plan for k, plan in enumerate(plans)]


def strategy_groups(pools: list[PoolRows]) -> dict[str, list[int]]:
    """The positions of the wards of each strategy ("recursive", "direct")."""
    return {
        kind: [k for k, pool in enumerate(pools) if pool.kind == kind]
        for kind in ("recursive", "direct")
    }


def shared_choices(
    pools: list[PoolRows], uniforms: SharedUniforms, end: pd.Timestamp
) -> dict[str, np.ndarray]:
    """For each strategy the wards' ``pools`` use, ``(paths, days)`` dates counted back from
    ``end`` (the histories' last day): the residual day (recursive) or the error path's origin
    (direct) every ward of that strategy takes on each path and day (module docstring)."""
    chosen = {}
    for kind, members in strategy_groups(pools).items():
        if kind == "recursive" and members:
            chosen[kind] = _chosen_days(pools, members, uniforms, end)
        elif members:
            chosen[kind] = _chosen_origins(pools, members, uniforms, end)
    return chosen


def _common_end(histories: list[pd.Series], settings: list) -> pd.Timestamp:
    """The day every history ends on (refusing histories that end on different days)."""
    if not histories:
        raise PlannerError("histories: no ward to forecast")
    if len(settings) != len(histories):
        raise PlannerError(
            f"settings: {len(settings)} given for {len(histories)} histories; give one per ward"
        )
    for k, history in enumerate(histories):
        if len(history) == 0:
            raise PlannerError(f"histories[{k}]: no days of admissions")
    end = pd.Timestamp(histories[0].index[-1])
    for k, history in enumerate(histories[1:], start=1):
        if pd.Timestamp(history.index[-1]) != end:
            raise PlannerError(
                f"histories[{k}]: ends on {pd.Timestamp(history.index[-1]).date()}, "
                f"histories[0] on {end.date()}; wards forecast together need histories "
                f"ending on the same day"
            )
    return end


def _date(end: pd.Timestamp, back) -> str:
    """The date ``back`` days counted back from ``end`` (1 = ``end``)."""
    return str((end - pd.Timedelta(days=int(back) - 1)).date())


def _wards(members: list[int]) -> str:
    return ", ".join(f"histories[{k}]" for k in members)


def _common(pools: list[PoolRows], members: list[int], least: int, what: str, end) -> np.ndarray:
    """The dates (days counted back from ``end``) every member's pool holds, oldest first,
    refused when two or more wards share fewer than ``least``."""
    common = reduce(np.intersect1d, [pools[k].back for k in members])[::-1]
    if len(members) > 1 and common.shape[0] < least:
        held = "none" if common.shape[0] == 0 else f"{common.shape[0]}"
        span = f" ({_date(end, common[0])} to {_date(end, common[-1])})" if common.shape[0] else ""
        raise PlannerError(
            f"histories: the {what} of {_wards(members)} share {held} dates{span}, fewer than "
            f"the {least} a joint forecast needs; give the wards longer histories over the same "
            f"days"
        )
    return common


def _pick(common: np.ndarray, uniforms: np.ndarray) -> np.ndarray:
    """``common[floor(u len(common))]`` for each uniform."""
    return common[np.minimum((uniforms * common.shape[0]).astype(np.int64), common.shape[0] - 1)]


def _chosen_days(pools, members, uniforms: SharedUniforms, end) -> np.ndarray:
    """``(paths, days)``: the residual day (counted back) each path takes on each day."""
    common = _common(pools, members, LEAST_COMMON_DAYS, "one-step residual pools", end)
    return _pick(common, uniforms.days)


def _chosen_origins(pools, members, uniforms: SharedUniforms, end) -> np.ndarray:
    """``(paths, days)``: the error path's origin (counted back) each path takes on each day:
    its own origin where every member observed the day from it, else one drawn among the
    common origins that did (per path and day)."""
    common = _common(pools, members, LEAST_COMMON_ORIGINS, "error-path origins", end)
    known = np.ones((common.shape[0], uniforms.fills.shape[1]), dtype=bool)
    for k in members:
        position = {int(back): row for row, back in enumerate(pools[k].back)}
        known &= pools[k].known[[position[int(back)] for back in common]]
    index = np.minimum((uniforms.origins * common.shape[0]).astype(np.int64), len(common) - 1)
    chosen = np.repeat(common[index][:, None], known.shape[1], axis=1)
    for day in np.flatnonzero(~known.all(axis=0)):
        observing = common[known[:, day]]
        if observing.shape[0] == 0:
            raise PlannerError(
                f"histories: no error-path origin of {_wards(members)} observed forecast day "
                f"{day + 1} on all of them; give more backtest origins or a shorter horizon"
            )
        chosen[:, day] = np.where(
            known[index, day], chosen[:, day], _pick(observing, uniforms.fills[:, day])
        )
    return chosen


def _note(groups: dict[str, list[int]]) -> str:
    """The sentence on the correlation lost between the strategy groups ("" when one group)."""
    if not (groups["recursive"] and groups["direct"]):
        return ""
    return (
        f"The correlation between the recursive wards ({_wards(groups['recursive'])}) and the "
        f"direct wards ({_wards(groups['direct'])}) is not kept: a recursive ward draws a past "
        f"day for each forecast day and a direct ward one past origin per path, so the two "
        f"groups are drawn independently."
    )

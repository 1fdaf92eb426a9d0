"""Analytic queueing formulas for a ward: Erlang B (loss), Erlang C (delay), infinite-server mean.

These are closed-form results for idealised wards (Poisson arrivals, fixed beds). The test suite
checks the simulation against them, and reports can quote them beside simulated figures.

Units: ``load`` is the offered load in erlangs = arrival rate x mean length of stay, in the same
time unit (e.g. admissions per day x days = occupied beds on average with unlimited beds).
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np

from planner.errors import PlannerError


def _check_servers_load(servers: int, load: float) -> None:
    if int(servers) != servers or servers < 0:
        raise PlannerError(f"servers must be a whole number >= 0, got {servers!r}")
    if not np.isfinite(load) or load < 0:
        raise PlannerError(f"load must be a finite number >= 0, got {load!r}")


def erlang_b(servers: int, load: float) -> float:
    """Erlang loss formula: probability that an arrival finds all ``servers`` beds occupied
    when Poisson arrivals offer ``load`` erlangs and blocked patients are lost (M/G/c/c).

    Computed by the stable recursion B(0) = 1, B(k) = a B(k-1) / (k + a B(k-1)).
    """
    _check_servers_load(servers, load)
    blocking = 1.0
    for k in range(1, int(servers) + 1):
        blocking = load * blocking / (k + load * blocking)
    return float(blocking)


def erlang_c(servers: int, load: float) -> float:
    """Erlang delay formula: probability that an arrival has to wait for one of ``servers``
    beds in an M/M/c queue offered ``load`` erlangs, C = B / (1 - (a/c)(1 - B)).

    For ``load >= servers`` the queue has no steady state and every patient eventually waits;
    1.0 is returned.
    """
    _check_servers_load(servers, load)
    if load >= servers:
        return 1.0
    blocking = erlang_b(servers, load)
    rho = load / servers
    return float(blocking / (1.0 - rho * (1.0 - blocking)))


#: Mean bed occupancy of the classical fixed-occupancy sizing rule.
OCCUPANCY_RULE = 0.85


def _check_share(target: float, name: str = "target") -> float:
    if not np.isfinite(target) or not 0 < target < 1:
        raise PlannerError(f"{name} must be a share between 0 and 1 (exclusive), got {target!r}")
    return float(target)


def erlang_loss_beds(load: float, target: float) -> int:
    """Erlang loss sizing: the fewest beds c with B(c, ``load``) <= ``target``, the share of
    patients finding no free bed for stationary Poisson arrivals offering ``load`` erlangs
    (arrivals per day x mean stay in days), whatever the stay distribution (M/G/c/c)."""
    _check_servers_load(0, load)
    _check_share(target)
    servers, blocking = 0, 1.0
    while blocking > target:
        servers += 1
        blocking = load * blocking / (servers + load * blocking)
    return servers


def occupancy_rule_beds(load: float, occupancy: float = OCCUPANCY_RULE) -> int:
    """Beds for a fixed mean occupancy: ceil(``load`` / ``occupancy``), with ``load`` the mean
    census (arrivals per day x mean stay in days, Little's law)."""
    _check_servers_load(0, load)
    _check_share(occupancy, "occupancy")
    return int(np.ceil(round(load / occupancy, 9)))


def carried_occupancy(servers: int, load: float) -> float:
    """Mean occupancy of ``servers`` beds offered ``load`` erlangs when turned-away patients
    are lost: the carried load a (1 - B(c, a)) divided by c (a share of the beds)."""
    if servers == 0:
        return 0.0
    return float(load * (1.0 - erlang_b(servers, load)) / servers)


def integrated_survival(
    survival: Callable[[np.ndarray], np.ndarray], upto_days: float, points: int = 20_001
) -> tuple[np.ndarray, np.ndarray]:
    """Grid ``x`` (days, 0..``upto_days``) and G(x) = integral_0^x P(S > v) dv (days),
    by the trapezoid rule on ``points`` equally spaced points."""
    from scipy.integrate import cumulative_trapezoid  # here: a slow import, rarely needed

    grid = np.linspace(0.0, float(upto_days), int(points))
    return grid, cumulative_trapezoid(np.asarray(survival(grid), dtype=float), grid, initial=0.0)


def infinite_server_mean(
    times_days: np.ndarray,
    daily_rate: np.ndarray,
    survival: Callable[[np.ndarray], np.ndarray],
) -> np.ndarray:
    """Mean occupied beds with unlimited beds (Mt/G/infinity), for a ward empty at day 0 with
    Poisson arrivals at ``daily_rate[d]`` patients per day, constant within day ``d``.

    m(t) = integral_0^t lambda(u) P(S > t - u) du = sum_d rate_d [G(t - d) - G(t - d - 1)],
    with G the integrated survival (``integrated_survival``) and G(x) = 0 for x <= 0.
    ``times_days``: times in days since 00:00 of day 0. Returns patients (float array).
    """
    times = np.asarray(times_days, dtype=float)
    rate = np.asarray(daily_rate, dtype=float)
    if np.any(times < 0) or np.any(rate < 0):
        raise PlannerError("times_days and daily_rate must be >= 0")
    horizon = max(float(times.max(initial=0.0)), 1.0)
    grid, cumulative = integrated_survival(survival, horizon)

    def big_g(x: np.ndarray) -> np.ndarray:
        return np.interp(np.clip(x, 0.0, None), grid, cumulative)

    days = np.arange(rate.size, dtype=float)
    lags = times[..., None] - days
    return (rate * (big_g(lags) - big_g(lags - 1.0))).sum(axis=-1)


def inpatients_remaining_mean(
    times_days: np.ndarray,
    elapsed_days: np.ndarray,
    survival: Callable[[np.ndarray], np.ndarray],
) -> np.ndarray:
    """Expected number of current inpatients still in bed ``times_days`` after 00:00 of day 0,
    for patients who have been in for ``elapsed_days``: sum_i P(S > e_i + t) / P(S > e_i)."""
    times = np.asarray(times_days, dtype=float)
    elapsed = np.asarray(elapsed_days, dtype=float)
    base = np.asarray(survival(elapsed), dtype=float)
    later = np.asarray(survival(elapsed + times[..., None]), dtype=float)
    return (later / base).sum(axis=-1)

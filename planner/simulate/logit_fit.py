"""Binomial logit maximum likelihood on grouped rows (cells of trials and successes), by
Newton-Raphson with step halving: the fit behind the discharge hazard
(:mod:`planner.simulate.discharge_fit`)."""

from __future__ import annotations

import numpy as np

from planner.errors import PlannerError

#: Newton-Raphson stops when no coefficient moves more than this (logit units).
TOLERANCE = 1e-10
MOST_ITERATIONS = 100


def _log_likelihood(logit: np.ndarray, at_risk: np.ndarray, events: np.ndarray) -> float:
    """Sum over cells of y log h + (n - y) log(1 - h), nats (the patient-day rows')."""
    return float(-events @ np.logaddexp(0, -logit) - (at_risk - events) @ np.logaddexp(0, logit))


def _information(design: np.ndarray, at_risk: np.ndarray, coef: np.ndarray):
    """Hazards of the cells and the Fisher information X' diag(n h (1 - h)) X at ``coef``."""
    h = 1.0 / (1.0 + np.exp(-np.clip(design @ coef, -700, 700)))
    return h, design.T @ (design * (at_risk * h * (1 - h))[:, None])


def newton_fit(
    design: np.ndarray, at_risk: np.ndarray, events: np.ndarray, start: np.ndarray
) -> tuple[np.ndarray, np.ndarray, float]:
    """Binomial logit maximum likelihood on cells (rows of ``design``, ``at_risk`` trials,
    ``events`` successes) by Newton-Raphson with step halving; returns the coefficients,
    the inverse Fisher information at them and the log-likelihood (nats)."""
    coef = start.astype(float)
    best = _log_likelihood(design @ coef, at_risk, events)
    for _ in range(MOST_ITERATIONS):
        h, information = _information(design, at_risk, coef)
        try:
            step = np.linalg.solve(information, design.T @ (events - at_risk * h))
        except np.linalg.LinAlgError:
            break
        value = _log_likelihood(design @ (coef + step), at_risk, events)
        while value < best - 1e-12 * abs(best) and np.max(np.abs(step)) >= TOLERANCE:
            step = step / 2
            value = _log_likelihood(design @ (coef + step), at_risk, events)
        coef, best = coef + step, value
        if np.max(np.abs(step)) < TOLERANCE:
            return coef, np.linalg.inv(_information(design, at_risk, coef)[1]), best
    raise PlannerError("discharge timing: the fit did not converge; too few discharges")

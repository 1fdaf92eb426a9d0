"""The one-way flow of a run: scenario -> history -> forecast paths -> simulated ward ->
summaries. Each step is a function the CLI commands call."""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from planner.errors import PlannerError
from planner.history import (
    admissions_from_episodes,
    completed_stays,
    episodes_end,
    inpatients_at,
    read_daily_admissions,
    read_episodes,
)
from planner.scenario import Scenario, load_scenario


@dataclass(frozen=True)
class WardHistory:
    """What the ward's files say: daily admissions (gap-free), episodes (or None) and the
    first forecast day."""

    admissions: pd.Series
    episodes: pd.DataFrame | None
    start: pd.Timestamp

    @property
    def last_day(self) -> pd.Timestamp:
        return self.admissions.index[-1]

    def inpatients_elapsed(self) -> np.ndarray:
        """Elapsed stays (days) of the patients on the ward at 00:00 of the start day."""
        if self.episodes is None:
            return np.zeros(0)
        return inpatients_at(self.episodes, self.start)

    def stays(self) -> np.ndarray | None:
        """Completed stays (days) known at the start, or None without episodes."""
        if self.episodes is None:
            return None
        return completed_stays(self.episodes, before=self.start)


def load_history(scenario: Scenario) -> WardHistory:
    """Read and cross-check the scenario's history files."""
    episodes = read_episodes(scenario.episodes_file) if scenario.episodes_file else None
    if scenario.admissions_file is not None:
        admissions = read_daily_admissions(scenario.admissions_file)
    else:
        admissions = admissions_from_episodes(episodes)
    first_free = admissions.index[-1] + pd.Timedelta(days=1)
    start = first_free if scenario.start is None else pd.Timestamp(scenario.start)
    if start < first_free:
        raise PlannerError(
            f"{scenario.source}: start: {start.date()} is inside the history, which runs to "
            f"{admissions.index[-1].date()}; the forecast must start after it"
        )
    if episodes is not None and episodes_end(episodes) >= first_free:
        late = episodes_end(episodes).date()
        raise PlannerError(
            f"{scenario.episodes_file}: has records on {late}, after the admissions history "
            f"ends ({admissions.index[-1].date()})"
        )
    return WardHistory(admissions, episodes, start)


def check_scenario(path: Path | None) -> list[str]:
    """Validate a scenario and its files; lines describing what was found."""
    scenario = load_scenario(path)
    history = load_history(scenario)
    lines = [
        f"{scenario.source}: ok",
        f"scenario: {scenario.name}",
        f"history: {len(history.admissions)} days, {history.admissions.index[0].date()} to "
        f"{history.last_day.date()}, mean {history.admissions.mean():.2f} admissions/day",
        f"forecast: {scenario.horizon_weeks} weeks from {history.start.date()}, "
        f"{scenario.paths} paths, seed {scenario.seed}",
        f"beds: {scenario.ward.beds} base, {len(scenario.ward.bed_changes)} dated change(s), "
        f"policy {scenario.ward.policy}",
    ]
    if history.episodes is not None:
        lines.append(
            f"episodes: {len(history.episodes)}, {len(history.inpatients_elapsed())} on the "
            f"ward at the start"
        )
    return lines

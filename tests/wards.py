"""Small wards built from values drawn by the hypothesis tests of both ward engines."""

from __future__ import annotations

from datetime import date

import numpy as np

from planner.simulate.settings import BedChange, WardSettings


def drawn_ward(beds: int, changes: list[tuple[int, int, int]], policy: str) -> WardSettings:
    """A ward from 1 Jan 2024 with ``beds`` plus 4 per change (so closures can bite without
    going below zero) and a ``BedChange`` for each (first day offset, length in days, beds)."""
    bed_changes = tuple(
        BedChange(date(2024, 1, 1 + first), date(2024, 1, 1 + first + length), change)
        for first, length, change in changes
    )
    return WardSettings(beds=beds + 4 * len(changes), bed_changes=bed_changes, policy=policy)


class FixedStay:
    """Every stay lasts exactly ``days``; the remaining stay is ``days`` - elapsed (at least
    a minute): worked examples with known event times."""

    inverse_transform = True

    def __init__(self, days: float):
        self.mean = days

    def from_uniforms(self, u):
        return np.full(np.shape(u), self.mean)

    def remaining_from_uniforms(self, u, elapsed):
        return np.maximum(self.mean - np.asarray(elapsed, dtype=float), 1.0 / (24 * 60))


#: A day and night rota for test scenario files (a scenario must give its rota).
ROTA = (
    "[[staffing.shift]]\nname = 'day'\nstart = '07:00'\nend = '19:00'\npatients_per_nurse = 4\n"
    "roster = [5, 5, 5, 5, 5, 5, 5]\n[[staffing.shift]]\nname = 'night'\nstart = '19:00'\n"
    "end = '07:00'\npatients_per_nurse = 7\nroster = [3, 3, 3, 3, 3, 3, 3]\n"
)


def demo_without_sizing(folder):
    """The demo's baseline scenario written into ``folder`` without its [sizing] table (its
    data path made absolute): a run of it does not size the ward."""
    from pathlib import Path

    demo = Path(__file__).resolve().parents[1] / "scenarios"
    text = (demo / "baseline.toml").read_text()
    start = text.index("[sizing]")
    text = text[:start] + text[text.index("[costs]", start) :]
    path = Path(folder) / "unsized.toml"
    path.write_text(text.replace('episodes = "data/', f'episodes = "{demo / "data"}/'))
    return path


def demo_generator():
    """The demo hospital's generator (scenarios/generate_hospital.py) as a module."""
    import importlib.util
    import sys
    from pathlib import Path

    path = Path(__file__).resolve().parents[1] / "scenarios" / "generate_hospital.py"
    spec = importlib.util.spec_from_file_location("generate_hospital", path)
    module = importlib.util.module_from_spec(spec)
    sys.modules[spec.name] = module
    spec.loader.exec_module(module)
    return module

"""Hospital scenario files: the wards simulated together and the rules between them.

A hospital file names its wards, each by a ward scenario file (its history, forecast, stays,
discharges, beds, rota and planned list, as for a run of that ward alone), and says which
wards may take which ward's patients when the home ward is full::

    name = "Medical and surgical wards"
    horizon_weeks = 13
    paths = 1000
    seed = 20261202

    [[ward]]
    name = "Larch"
    scenario = "baseline.toml"

    [[ward]]
    name = "Rowan"
    scenario = "older_peoples_ward.toml"
    changes = { "beds.base" = 26 }    # any ward-scenario keys, dotted, as a plan would set

    [outlying]
    move_back = true                  # an outlier moves home when a home bed frees ...
    move_back_hours = 48              # ... if placed less than 48 hours ago
    [outlying.to]
    Larch = ["Rowan"]                 # Larch's emergency patients may go to Rowan, in order

The run's horizon, paths, seed and engine are the hospital file's (a ward file's own are not
used); every ward's history must end on the same day. ``extends = "other.toml"`` starts from
another hospital file: its wards, rules and settings, with this file's keys on top (``[[ward]]``
replaced whole when given; ``[changes.<ward>]`` adds ward-scenario changes to a named ward).
Paths are relative to the file that names them.
"""

from __future__ import annotations

import math
import tomllib
from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any

from planner.errors import PlannerError
from planner.hospital.model import Outlying
from planner.scenario import Scenario, load_scenario

#: Keys of a hospital file (top level), with defaults.
TOP = {
    "name": None,
    "description": "",
    "extends": None,
    "horizon_weeks": 13,
    "paths": 1000,
    "seed": 2026,
    "ward": None,
    "outlying": None,
    "changes": None,
    "simulation": None,
}
OUTLYING_KEYS = ("move_back", "move_back_hours", "to")
ENGINES = ("auto", "fast", "simpy")


@dataclass(frozen=True)
class HospitalScenario:
    """A resolved hospital file: ``names`` and ward ``scenarios`` in the file's order, the
    ``outlying`` rules (positions in that order), and the run's settings."""

    name: str
    source: Path
    description: str
    names: tuple[str, ...]
    scenarios: tuple[Scenario, ...]
    outlying: Outlying
    horizon_weeks: int
    paths: int
    seed: int
    engine: str

    @property
    def horizon_days(self) -> int:
        return 7 * self.horizon_weeks

    def describe_outlying(self) -> list[str]:
        """One line per ward with outlying wards, and the moving-back rule."""
        lines = [f"{self.names[w]} patients may outlie to {', '.join(self.names[h] for h in hosts)}"
                 for w, hosts in enumerate(self.outlying.hosts) if hosts]  # fmt: skip
        if not lines:
            return ["no outlying: each ward keeps its own patients"]
        rule = self.outlying
        if rule.move_back:
            limit = (
                ""
                if math.isinf(rule.move_back_hours)
                else (f" if placed less than {rule.move_back_hours:g} hours before")
            )
            lines.append(f"an outlier moves home when a home bed frees{limit}")
        else:
            lines.append("outliers stay on the host ward until discharged")
        return lines


def is_hospital_file(path: str | Path | None, seen: frozenset[Path] = frozenset()) -> bool:
    """Whether ``path`` is a hospital file (it has ``[[ward]]`` tables or extends one); a
    file that cannot be read, or a cycle of ``extends``, is left to the scenario reader."""
    if path is None or Path(path).suffix.lower() != ".toml" or not Path(path).is_file():
        return False
    where = Path(path).resolve()
    if where in seen:
        return False
    try:
        document = tomllib.loads(where.read_text(encoding="utf-8"))
    except (tomllib.TOMLDecodeError, UnicodeDecodeError):
        return False
    if "ward" in document:
        return True
    parent = document.get("extends")
    return isinstance(parent, str) and is_hospital_file(where.parent / parent, seen | {where})


def _read(path: Path, seen: tuple[Path, ...] = ()) -> dict[str, Any]:
    """The merged document of hospital file ``path`` and the files it extends."""
    path = path.resolve()
    if path in seen:
        raise PlannerError(f"{path}: extends: cycle")
    if not path.is_file():
        raise PlannerError(f"{path}: hospital file not found")
    try:
        document = tomllib.loads(path.read_text(encoding="utf-8"))
    except tomllib.TOMLDecodeError as error:
        raise PlannerError(f"{path}: not valid TOML ({error})") from None
    for key in document:
        if key not in TOP:
            raise PlannerError(f"{path}: unknown key {key!r} in a hospital file "
                               f"(keys: {', '.join(TOP)})")  # fmt: skip
    for ward in document.get("ward", []):
        if isinstance(ward, dict) and isinstance(ward.get("scenario"), str):
            ward["scenario"] = str((path.parent / ward["scenario"]).resolve())
    parent = document.pop("extends", None)
    if parent is None:
        return document
    base = _read(path.parent / parent, (*seen, path))
    changes = {**(base.get("changes") or {})}
    for ward, given in (document.pop("changes", None) or {}).items():
        changes[ward] = {**changes.get(ward, {}), **given}
    merged = {**base, **document, "changes": changes}
    if "outlying" in document and "outlying" in base:
        merged["outlying"] = {**base["outlying"], **document["outlying"]}
    return merged


def _wards(document: dict[str, Any], where: str) -> tuple[list[str], list[Scenario]]:
    wards = document.get("ward")
    if not isinstance(wards, list) or not wards:
        raise PlannerError(f"{where}: ward: give at least one [[ward]] with name and scenario")
    names, scenarios = [], []
    changes = document.get("changes") or {}
    for number, ward in enumerate(wards, start=1):
        if not isinstance(ward, dict) or not {"name", "scenario"} <= set(ward):
            raise PlannerError(f"{where}: ward {number}: give name and scenario")
        unknown = set(ward) - {"name", "scenario", "changes"}
        if unknown:
            raise PlannerError(f"{where}: ward {number}: unknown key {sorted(unknown)[0]!r}")
        name = str(ward["name"])
        if name in names:
            raise PlannerError(f"{where}: ward {name!r} is named twice")
        scenario = load_scenario(ward["scenario"])
        given = {**(ward.get("changes") or {}), **changes.get(name, {})}
        if given:
            scenario = scenario.with_changes(given)
        names.append(name)
        scenarios.append(scenario)
    for name in changes:
        if name not in names:
            raise PlannerError(f"{where}: changes: no ward named {name!r} (wards: "
                               f"{', '.join(names)})")  # fmt: skip
    return names, scenarios


def _outlying(document: dict[str, Any], names: list[str], where: str) -> Outlying:
    table = document.get("outlying") or {}
    for key in table:
        if key not in OUTLYING_KEYS:
            raise PlannerError(f"{where}: outlying: unknown key {key!r} "
                               f"(keys: {', '.join(OUTLYING_KEYS)})")  # fmt: skip
    hosts: list[tuple[int, ...]] = [() for _ in names]
    for home, listed in (table.get("to") or {}).items():
        if home not in names:
            raise PlannerError(f"{where}: outlying.to: no ward named {home!r} "
                               f"(wards: {', '.join(names)})")  # fmt: skip
        if not isinstance(listed, list) or any(h not in names for h in listed):
            raise PlannerError(f"{where}: outlying.to.{home}: give a list of ward names "
                               f"from {', '.join(names)}")  # fmt: skip
        if home in listed:
            raise PlannerError(f"{where}: outlying.to.{home}: a ward cannot outlie to itself")
        hosts[names.index(home)] = tuple(names.index(h) for h in listed)
    move_back = table.get("move_back", False)
    hours = table.get("move_back_hours", math.inf)
    if not isinstance(move_back, bool):
        raise PlannerError(f"{where}: outlying.move_back: give true or false")
    if isinstance(hours, bool) or not isinstance(hours, int | float) or not hours > 0:
        raise PlannerError(f"{where}: outlying.move_back_hours: give hours > 0")
    return Outlying(tuple(hosts), move_back, float(hours))


def _whole(document: dict[str, Any], key: str, where: str) -> int:
    value = document.get(key, TOP[key])
    if isinstance(value, bool) or not isinstance(value, int) or value < 1:
        raise PlannerError(f"{where}: {key}: give a whole number >= 1, got {value!r}")
    return value


def load_hospital(path: str | Path) -> HospitalScenario:
    """Read, merge and check a hospital file and every ward scenario it names."""
    path = Path(path)
    document = _read(path)
    where = str(path)
    names, scenarios = _wards(document, where)
    engine = (document.get("simulation") or {}).get("engine", "auto")
    if engine not in ENGINES:
        raise PlannerError(f"{where}: simulation.engine: one of {', '.join(ENGINES)}")
    seed = document.get("seed", TOP["seed"])
    if isinstance(seed, bool) or not isinstance(seed, int) or seed < 0:
        raise PlannerError(f"{where}: seed: give a whole number >= 0, got {seed!r}")
    run = {"horizon_weeks": _whole(document, "horizon_weeks", where),
           "paths": _whole(document, "paths", where), "seed": seed, "engine": engine}  # fmt: skip
    # Each ward runs with the hospital's horizon, paths, seed and engine (its own are unused).
    wards = tuple(replace(scenario, **run, resolved={**scenario.resolved, **run})
                  for scenario in scenarios)  # fmt: skip
    return HospitalScenario(
        name=str(document.get("name") or path.stem),
        source=path.resolve(),
        description=str(document.get("description", "")),
        names=tuple(names),
        scenarios=wards,
        outlying=_outlying(document, names, where),
        **run,
    )

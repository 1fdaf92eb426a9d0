"""Reading scenario files (TOML) into validated, immutable settings.

A scenario file describes one ward plan; its keys are listed, with units and defaults, in
:mod:`planner.schema` and docs/scenario.md. ``extends = "other.toml"`` starts from another
file: tables merge key by key, arrays of tables (``[[beds.change]]`` ...) are replaced whole.
Paths are resolved relative to the file that names them.
"""

from __future__ import annotations

import copy
import tomllib
from collections.abc import Mapping
from dataclasses import dataclass, field
from datetime import date
from importlib import resources
from pathlib import Path
from typing import Any

from planner.errors import PlannerError
from planner.forecast.settings import (
    LEAST_ERROR_PATHS,
    DemandAdjustment,
    ForecastSettings,
    LevelChange,
    Surge,
)
from planner.records.files import HistoryFormat
from planner.scenario_history import history_format
from planner.scenario_patients import read_discharge, read_planned, read_stay
from planner.scenario_ward import check_range, read_ward, table_items
from planner.schema import TABLES, TOP
from planner.schema_checks import table_values, validate
from planner.simulate.settings import (
    DischargeSettings,
    PlannedSettings,
    StaySettings,
    WardSettings,
)
from planner.summaries.comparison import Costs
from planner.summaries.sizing import SizingTarget, sizing_target

DEMO_NAME = "baseline.toml"


@dataclass(frozen=True)
class Scenario:
    """A resolved scenario: every key has its value (given, inherited or default)."""

    name: str
    source: Path
    description: str
    admissions_file: Path | None
    episodes_file: Path | None
    horizon_weeks: int
    start: date | None
    paths: int
    seed: int
    forecast: ForecastSettings
    stay: StaySettings
    ward: WardSettings
    costs: Costs
    engine: str
    resolved: dict[str, Any] = field(repr=False, compare=False)
    history_format: HistoryFormat = field(default_factory=HistoryFormat)
    discharge: DischargeSettings = field(default_factory=DischargeSettings)
    planned: PlannedSettings = field(default_factory=PlannedSettings)
    #: The [sizing] target, None when the scenario has no [sizing] table.
    sizing: SizingTarget | None = None

    @property
    def horizon_days(self) -> int:
        return 7 * self.horizon_weeks

    def with_changes(self, changes: Mapping[str, Any]) -> Scenario:
        """This scenario with keys changed by their dotted names, as a scenario file names
        them: ``{"beds.base": 30, "discharge.seven_day": 1.0, "name": "30 beds"}``; a table
        or array of tables given whole (``"staffing.shift": [...]``) replaces it. Paths are
        relative to the working folder. The result is checked as a scenario file is."""
        document = copy.deepcopy(self.resolved)
        given: dict[str, Any] = {}
        for key, value in changes.items():
            table, *parts = key.split(".")
            target = given.setdefault(table, {}) if parts else given
            for part in parts[:-1]:
                target = target.setdefault(part, {})
            target[parts[-1] if parts else table] = value
        where = f"{self.source} (changed: {', '.join(changes)})"
        validate(given, where)
        _absolute_paths(given, Path.cwd())
        return scenario_from_document(_merge(document, given), self.source)


def demo_scenario_path() -> Path:
    """The bundled demo scenario: installed with the package as ``planner.demo``, or the
    scenarios/ folder beside the package when running from a source checkout."""
    try:
        return Path(str(resources.files("planner.demo").joinpath(DEMO_NAME)))
    except ModuleNotFoundError:
        return Path(__file__).resolve().parents[1] / "scenarios" / DEMO_NAME


def _read_toml(path: Path) -> dict[str, Any]:
    if path.is_dir():
        raise PlannerError(f"{path}: is a folder, not a scenario file")
    if not path.is_file():
        raise PlannerError(f"{path}: scenario file not found")
    if path.suffix.lower() in (".csv", ".txt", ".tsv"):
        raise PlannerError(
            f"{path}: is a data file, not a scenario (.toml); name it under [history] "
            f"in a scenario file and give that"
        )
    try:
        with path.open("rb") as handle:
            return tomllib.load(handle)
    except tomllib.TOMLDecodeError as error:
        raise PlannerError(f"{path}: not valid TOML ({error})") from None
    except UnicodeDecodeError:
        raise PlannerError(f"{path}: not a UTF-8 text file") from None


def _absolute_paths(document: dict[str, Any], folder: Path) -> None:
    """Make path-valued keys absolute, relative to the file that names them."""
    if "extends" in document:
        document["extends"] = str((folder / document["extends"]).resolve())
    history = document.get("history", {})
    for name in ("admissions", "episodes"):
        if name in history:
            history[name] = str((folder / history[name]).resolve())
    planned = document.get("planned", {})
    if isinstance(planned, dict) and isinstance(planned.get("bookings"), str):
        planned["bookings"] = str((folder / planned["bookings"]).resolve())


def _merge(base: dict[str, Any], override: dict[str, Any]) -> dict[str, Any]:
    merged = dict(base)
    for name, value in override.items():
        if isinstance(value, dict) and isinstance(merged.get(name), dict):
            merged[name] = _merge(merged[name], value)
        else:
            merged[name] = value
    return merged


def read_document(path: Path, _seen: tuple[Path, ...] = ()) -> dict[str, Any]:
    """The merged document of ``path`` and the files it extends, each validated."""
    path = Path(path).resolve()
    if path in _seen:
        chain = " -> ".join(p.name for p in (*_seen, path))
        raise PlannerError(f"{path}: extends: cycle ({chain})")
    document = _read_toml(path)
    validate(document, str(path))
    _absolute_paths(document, path.parent)
    parent = document.pop("extends", None)
    if parent is None:
        return document
    return _merge(read_document(Path(parent), (*_seen, path)), document)


#: Forecast settings named otherwise than their key in the scenario's [forecast] table.
_FORECAST_FIELDS = {"holidays": "holiday_dates", "backtest_every_days": "backtest_every"}


def _forecast(document: dict[str, Any], where: str) -> ForecastSettings:
    values = table_values(document, "forecast")
    surges = []
    for number, item in enumerate(table_items(document, "demand.surge"), start=1):
        check_range(f"{where}: demand.surge[{number}]", item["start"], item["end"])
        surges.append(Surge(item["start"], item["end"], float(item["factor"])))
    demand = DemandAdjustment(float(table_values(document, "demand")["growth"]), tuple(surges))
    fields = {_FORECAST_FIELDS.get(key, key): value for key, value in values.items()}
    fields["holiday_dates"] = tuple(fields["holiday_dates"])
    direct_backtest = (fields["strategy"], fields["residuals"]) == ("direct", "backtest")
    if direct_backtest and fields["backtest_origins"] < LEAST_ERROR_PATHS:
        raise PlannerError(
            f'{where}: forecast.backtest_origins: residuals = "backtest" with the direct '
            f"strategy resamples one error path per origin and needs at least "
            f"{LEAST_ERROR_PATHS}, got {fields['backtest_origins']}; give more backtest "
            f"origins (and a longer history if needed)"
        )
    if fields["min_lag"] > fields["max_lag"]:
        raise PlannerError(
            f"{where}: forecast.min_lag: must be <= forecast.max_lag ({fields['max_lag']}), "
            f"got {fields['min_lag']}"
        )
    return ForecastSettings(**fields, demand=demand, level_changes=_level_changes(document, where))


def _level_changes(document: dict[str, Any], where: str) -> tuple[LevelChange, ...]:
    """The ``[[forecast.level_change]]`` entries, in file order (messages number them so);
    two on one day are refused.
    Their dates are checked against the history when it is read
    (:func:`planner.forecast.level_change.check_level_changes`)."""
    changes, seen = [], {}
    for number, item in enumerate(table_items(document, "forecast.level_change"), start=1):
        if item["date"] in seen:
            raise PlannerError(
                f"{where}: forecast.level_change[{number}].date: {item['date']} is also the "
                f"date of forecast.level_change[{seen[item['date']]}]; give one change per day"
            )
        seen[item["date"]] = number
        size = item.get("relative_change")
        changes.append(LevelChange(item["date"], None if size is None else float(size)))
    return tuple(changes)


def plan_lines(scenario: Scenario) -> list[str]:
    """The resolved plan, a line per table: each key's value, marked "given" (in the scenario
    file or one it extends) or "default"; arrays of tables by their number of entries."""
    document = scenario.resolved

    def shown(key, given: dict) -> str:
        value = given.get(key.name, key.default)
        mark = "given" if key.name in given else "default"
        if isinstance(value, date):
            text = value.isoformat()
        elif isinstance(value, list) and len(value) > 4:
            text = f"[{len(value)} values]"
        else:
            text = repr(value)
        return f"{key.name} = {text} ({mark})"

    lines = ["plan: " + ", ".join(shown(key, document) for key in TOP if key.name != "extends")]
    for table in TABLES:
        root, *child = table.name.split(".")
        given = document.get(root, {})
        given = given.get(child[0], [] if table.many else {}) if child else given
        if table.many:
            lines.append(f"  [[{table.name}]]: {len(given)} given")
        elif isinstance(given, dict):
            lines.append(f"  [{table.name}] " + ", ".join(shown(key, given) for key in table.keys))
    return lines


def load_scenario(path: str | Path | None = None) -> Scenario:
    """Read, merge and validate a scenario file (default: the bundled demo)."""
    path = demo_scenario_path() if path is None else Path(path)
    return scenario_from_document(read_document(path), path)


def scenario_from_document(document: dict[str, Any], path: Path) -> Scenario:
    """The resolved scenario of a merged, validated ``document`` read from ``path``."""
    where = str(path)
    top = {key.name: document.get(key.name, key.default) for key in TOP}
    history = table_values(document, "history")
    if history["admissions"] is None and history["episodes"] is None:
        raise PlannerError(f"{where}: history: give history.episodes or history.admissions")
    stay = read_stay(document, where)
    if stay.mean is None and history["episodes"] is None:
        raise PlannerError(
            f"{where}: stay: without history.episodes, give stay.mean "
            f"(and stay.sd) so stays can be simulated"
        )
    return Scenario(
        name=top["name"] or Path(path).stem,
        source=Path(path).resolve(),
        description=top["description"],
        admissions_file=Path(history["admissions"]) if history["admissions"] else None,
        episodes_file=Path(history["episodes"]) if history["episodes"] else None,
        horizon_weeks=top["horizon_weeks"],
        start=top["start"],
        paths=top["paths"],
        seed=top["seed"],
        forecast=_forecast(document, where),
        stay=stay,
        ward=read_ward(document, where),
        engine=table_values(document, "simulation")["engine"],
        costs=Costs(**{k: float(v) for k, v in table_values(document, "costs").items()}),
        resolved=document,
        history_format=history_format(document, where),
        discharge=read_discharge(
            document, where, history["episodes"] is not None and stay.mean is None
        ),
        planned=read_planned(document, where),
        sizing=sizing_target(document["sizing"], where) if "sizing" in document else None,
    )

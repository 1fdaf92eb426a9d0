"""What identifies a setup and its data: hashes of input files and of a resolved scenario.

Two runs with equal :func:`scenario_key` used the same settings (apart from those that do not
change what a hindcast computes) and byte-identical history files.
"""

from __future__ import annotations

import hashlib
import json
from datetime import date, datetime
from pathlib import Path
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from planner.scenario import Scenario

#: Scenario keys that do not change what a hindcast computes.
NOT_IN_KEY = ("name", "description", "paths", "seed", "costs", "start", "history")
#: The [history] keys naming files; the other [history] keys say how they are read.
HISTORY_FILES = ("admissions", "episodes")


def file_sha256(path: Path) -> str:
    """SHA-256 of a file's bytes, as hex."""
    digest = hashlib.sha256()
    with Path(path).open("rb") as handle:
        for block in iter(lambda: handle.read(1 << 20), b""):
            digest.update(block)
    return digest.hexdigest()


def json_ready(value: Any) -> Any:
    """Scenario values made JSON-friendly (dates as ISO text)."""
    if isinstance(value, dict):
        return {key: json_ready(item) for key, item in value.items()}
    if isinstance(value, list | tuple):
        return [json_ready(item) for item in value]
    if isinstance(value, date | datetime):
        return value.isoformat()
    return value


def scenario_key(scenario: Scenario) -> str:
    """A hash (hex, 16 digits) of the resolved scenario without the keys that do not change a
    hindcast, plus the contents of its history files and how they are read (the [history]
    keys other than the paths): equal keys = the same setup and data."""
    resolved = {k: v for k, v in scenario.resolved.items() if k not in NOT_IN_KEY}
    files = [p for p in (scenario.admissions_file, scenario.episodes_file) if p]
    record = {"scenario": json_ready(resolved), "files": [file_sha256(p) for p in files]}
    # How the files are read (columns, ward, methods ...): the same file read for another
    # ward is other data. Paths are left out (the files' contents are in the key).
    reading = {
        k: v for k, v in scenario.resolved.get("history", {}).items() if k not in HISTORY_FILES
    }
    if reading:
        record["reading"] = json_ready(reading)
    text = json.dumps(record, sort_keys=True, default=str)
    return hashlib.sha256(text.encode()).hexdigest()[:16]

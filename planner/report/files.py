"""Writing result files: CSV tables with fixed formatting and the run record (run.json).

CSV files use at most 6 significant digits and ``\\n`` line ends, so the same scenario and
seed give byte-identical files.
"""

from __future__ import annotations

import json
import platform
import sys
from datetime import datetime
from importlib import metadata
from pathlib import Path
from typing import Any

import pandas as pd

from planner.fingerprint import file_sha256, json_ready

PACKAGES = (
    "planner",
    "numpy",
    "pandas",
    "scipy",
    "statsmodels",
    "simpy",
    "matplotlib",
    "click",
    "numba",
)


def write_csv(frame: pd.DataFrame, path: Path, float_format: str = "%.6g") -> None:
    """Write a table with dates as YYYY-MM-DD and floats to 6 significant digits (or
    ``float_format``)."""
    out = frame.copy()
    for column in out.columns:
        if pd.api.types.is_datetime64_any_dtype(out[column]):
            out[column] = out[column].dt.strftime("%Y-%m-%d")
    out.to_csv(path, index=False, float_format=float_format, lineterminator="\n")


def package_versions() -> dict[str, str]:
    versions = {"python": platform.python_version()}
    for name in PACKAGES:
        try:
            versions[name] = metadata.version(name)
        except metadata.PackageNotFoundError:
            versions[name] = "not installed"
    return versions


def run_record(
    command: str,
    scenario_file: Path,
    resolved: dict[str, Any],
    inputs: list[Path],
    seed: int,
    paths: int,
    extra: dict[str, Any],
) -> dict[str, Any]:
    """What is needed to repeat a run: the resolved scenario, input hashes, seed, versions."""
    return {
        "command": command,
        "argv": sys.argv[1:],
        "scenario_file": str(scenario_file),
        "scenario": json_ready(resolved),
        "inputs": {str(path): file_sha256(path) for path in inputs},
        "seed": seed,
        "paths": paths,
        "versions": package_versions(),
        "created": datetime.now().isoformat(timespec="seconds"),
        **json_ready(extra),
    }


def write_json(record: dict[str, Any], path: Path) -> None:
    path.write_text(json.dumps(record, indent=2, sort_keys=False) + "\n")

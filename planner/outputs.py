"""Output folders: chosen once, written atomically.

A command writes everything into a temporary folder beside the target and renames it into
place only when all files are written, so an interrupted or failed run leaves no half
report and never touches an earlier run's folder.
"""

from __future__ import annotations

import re
import shutil
import tempfile
from collections.abc import Iterator
from contextlib import contextmanager
from datetime import datetime
from pathlib import Path

from planner.errors import PlannerError

DEFAULT_ROOT = Path("outputs")


def default_folder(scenario_name: str, command: str, now: datetime | None = None) -> Path:
    """outputs/<scenario>-<command>-<YYYYmmdd-HHMMSS>, the scenario name made file-safe."""
    now = now or datetime.now()
    slug = re.sub(r"[^a-z0-9]+", "-", scenario_name.lower()).strip("-") or "scenario"
    return DEFAULT_ROOT / f"{slug}-{command}-{now:%Y%m%d-%H%M%S}"


def check_target(target: Path, overwrite: bool) -> None:
    """Refuse to replace an existing non-empty folder unless asked to."""
    if target.exists() and not target.is_dir():
        raise PlannerError(f"{target}: exists and is not a folder")
    if target.is_dir() and any(target.iterdir()) and not overwrite:
        raise PlannerError(f"{target}: folder exists and is not empty (use --overwrite)")


def _missing_parents(folder: Path) -> list[Path]:
    """The folders above and including ``folder`` that do not exist yet, deepest first."""
    missing = []
    while not folder.exists():
        missing.append(folder)
        folder = folder.parent
    return missing


@contextmanager
def atomic_folder(target: str | Path, overwrite: bool = False) -> Iterator[Path]:
    """Yield a temporary folder; on success it replaces ``target``; on any error (or
    Ctrl-C) it is removed, with any parent folders made for it, and ``target`` is left as
    it was.

    An earlier ``target`` is moved aside (renamed) before the new folder is renamed into
    place and deleted only after, so at every moment one complete folder is there.
    """
    target = Path(target)
    check_target(target, overwrite)
    made = _missing_parents(target.parent)
    target.parent.mkdir(parents=True, exist_ok=True)
    staging = Path(tempfile.mkdtemp(prefix=f".{target.name}.", dir=target.parent))
    try:
        yield staging
    except BaseException:
        shutil.rmtree(staging, ignore_errors=True)
        for folder in made:
            try:
                folder.rmdir()
            except OSError:
                break
        raise
    if not target.exists():
        staging.rename(target)
        return
    aside = Path(tempfile.mkdtemp(prefix=f".{target.name}.old.", dir=target.parent))
    target.rename(aside / target.name)
    try:
        staging.rename(target)
    except BaseException:
        (aside / target.name).rename(target)
        shutil.rmtree(staging, ignore_errors=True)
        raise
    shutil.rmtree(aside, ignore_errors=True)

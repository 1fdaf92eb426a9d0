"""A cache on disk of backtest results, so that a repeated run, or plans compared on the same
history, do not redo the rolling-origin backtest (about a quarter of a second on the demo).

An entry is keyed by a SHA-256 digest of everything the backtest reads
(:func:`backtest_key`): the admissions history's values and dates (its content, not the
file's path), the deterministic columns over the history and the horizon (so the calendar
terms, holidays, trend and level changes' steps are in it), the settings the backtest uses
(``max_lag``, ``min_lag``, ``criterion``, ``order``, ``refit``, ``refit_series``, ``spread``,
``backtest_origins``, ``backtest_every``, the paths per origin), the horizon, the random
stream it draws from (the generator's ``SeedSequence``: entropy, spawn key, children already
spawned) and the code: the entry format's :data:`CACHE_VERSION`, a digest of the forecast
package's source files and the numpy and scipy versions. The forecast settings the backtest
does not read (``strategy``, ``residuals``, demand changes, the stated sizes of level changes)
are not in the key: plans differing only in them share it.

Where: ``$PLANNER_CACHE`` when set (an empty value turns the cache off), else a ``planner``
folder under ``$XDG_CACHE_HOME``, else under ``~/.cache``. Entries are ``.npz`` files (no
pickles) written to a temporary file and renamed, so a reader never sees half an entry; an
entry that cannot be read or does not match its key is ignored and recomputed, never an
error, and a cache folder that cannot be written is silently not used. At most
:data:`MOST_ENTRIES` are kept (the least recently used go first). Deleting the folder clears it.
"""

from __future__ import annotations

import functools
import hashlib
import os
import tempfile
from pathlib import Path

import numpy as np
import pandas as pd

from planner.forecast.backtest import BacktestInputs, backtest_inputs, backtest_path_count
from planner.forecast.result import BacktestResult

#: Raise when the entry format or the backtest's results change in a way the source digest
#: would not see (e.g. a dependency's behaviour).
CACHE_VERSION = 2
ENVIRONMENT_VARIABLE = "PLANNER_CACHE"
MOST_ENTRIES = 256
_PREFIX = "backtest-"
_TEXT_COLUMNS = ("strategy",)
_WHOLE_COLUMNS = ("horizon_week", "days")


def cache_folder() -> Path | None:
    """The cache folder from the environment (see the module docstring); None when off."""
    chosen = os.environ.get(ENVIRONMENT_VARIABLE)
    if chosen is not None:
        return Path(chosen).expanduser() if chosen.strip() else None
    base = os.environ.get("XDG_CACHE_HOME")
    if not base:
        try:
            base = str(Path.home() / ".cache")
        except (KeyError, RuntimeError):  # no home folder known: no cache
            return None
    return Path(base).expanduser() / "planner"


@functools.cache
def source_digest() -> str:
    """SHA-256 of the forecast package's source files (empty when they cannot be read); read
    once per process."""
    digest = hashlib.sha256()
    try:
        for path in sorted(Path(__file__).resolve().parent.glob("*.py")):
            digest.update(path.name.encode() + b"\0" + path.read_bytes())
    except OSError:
        return ""
    return digest.hexdigest()


def _stream(rng: np.random.Generator) -> tuple | None:
    seeds = getattr(rng.bit_generator, "seed_seq", None)
    if not isinstance(seeds, np.random.SeedSequence):
        return None
    entropy = seeds.entropy
    entropy = tuple(int(e) for e in entropy) if np.ndim(entropy) else int(entropy)
    return (
        type(rng.bit_generator).__name__,
        entropy,
        tuple(int(k) for k in seeds.spawn_key),
        seeds.pool_size,
        seeds.n_children_spawned,
    )


def backtest_key(
    inputs: BacktestInputs, settings, n_paths: int, rng: np.random.Generator
) -> str | None:
    """Hex digest naming the backtest of ``inputs`` with these settings, paths and generator
    (None when the generator does not come from a ``SeedSequence``: nothing to key it by)."""
    stream = _stream(rng)
    if stream is None:
        return None
    import scipy

    described = (
        CACHE_VERSION,
        source_digest(),
        np.__version__,
        scipy.__version__,
        inputs.names,
        inputs.deterministic.shape,
        inputs.horizon,
        settings.max_lag,
        settings.min_lag,
        settings.criterion,
        settings.order,
        bool(settings.refit),
        settings.refit_series,
        settings.spread,
        settings.backtest_origins,
        settings.backtest_every,
        backtest_path_count(n_paths, settings),
        stream,
    )
    digest = hashlib.sha256(repr(described).encode())
    for array in (
        np.ascontiguousarray(inputs.values, dtype=np.float64),
        inputs.dates.to_numpy().astype("datetime64[ns]").view(np.int64),
        np.ascontiguousarray(inputs.deterministic, dtype=np.float64),
    ):
        digest.update(str(array.shape).encode())
        digest.update(array.tobytes())
    return digest.hexdigest()


def cached_backtest(
    inputs: BacktestInputs, settings, n_paths: int, rng: np.random.Generator, folder: Path | None
) -> BacktestResult:
    """The backtest of ``inputs`` (:func:`planner.forecast.backtest.backtest_inputs`), read from
    the cache in ``folder`` when an entry has the same key (then ``from_cache`` is True), else
    computed and stored. ``folder`` None: always computed, nothing stored."""
    key = None if folder is None else backtest_key(inputs, settings, n_paths, rng)
    if key is not None:
        found = load(folder, key)
        if found is not None:
            return found
    result = backtest_inputs(inputs, settings, n_paths, rng)
    if key is not None:
        store(folder, key, result)
    return result


def entry_path(folder: Path, key: str) -> Path:
    return folder / f"{_PREFIX}{key}.npz"


def load(folder: Path, key: str) -> BacktestResult | None:
    """The entry of ``key`` with ``from_cache=True``, or None when it is missing, unreadable,
    damaged or made for another key."""
    path = entry_path(folder, key)
    try:
        with np.load(path, allow_pickle=False) as entry:
            if str(entry["key"]) != key:
                return None
            columns = [str(c) for c in entry["columns"]]
            table = pd.DataFrame({c: _column(c, entry[f"column_{c}"]) for c in columns})
            origins = pd.DatetimeIndex(entry["origins"], name=_name(entry["origins_name"]))
            result = BacktestResult(
                table=table,
                origins=origins,
                residuals={
                    "recursive": np.array(entry["residuals_recursive"]),
                    "direct": np.array(entry["residuals_direct"]),
                },
                n_paths=int(entry["n_paths"]),
                from_cache=True,
                spread=str(entry["spread"]),
                spread_pinball={
                    str(name): float(loss)
                    for name, loss in zip(
                        entry["spread_names"], entry["spread_pinball"], strict=True
                    )
                },
            )
        os.utime(path)  # recently used: kept longest
    except Exception:  # any damage to an entry means: recompute it
        return None
    return result


def store(folder: Path, key: str, result: BacktestResult) -> None:
    """Write ``result`` as the entry of ``key`` (atomically); do nothing if that fails."""
    arrays = {
        "key": np.array(key),
        "columns": np.array([str(c) for c in result.table.columns]),
        "origins": result.origins.to_numpy(),
        "origins_name": np.array([] if result.origins.name is None else [result.origins.name]),
        "residuals_recursive": result.residuals["recursive"],
        "residuals_direct": result.residuals["direct"],
        "n_paths": np.array(result.n_paths),
        "spread": np.array(result.spread),
        "spread_names": np.array(list(result.spread_pinball), dtype=str),
        "spread_pinball": np.array(list(result.spread_pinball.values()), dtype=float),
    }
    for column in result.table.columns:
        values = result.table[column].to_numpy()
        arrays[f"column_{column}"] = values.astype(str) if column in _TEXT_COLUMNS else values
    temporary = None
    try:
        folder.mkdir(parents=True, exist_ok=True)
        with tempfile.NamedTemporaryFile(
            dir=folder, prefix=f".{_PREFIX}", suffix=".tmp", delete=False
        ) as handle:
            temporary = Path(handle.name)
            np.savez(handle, **arrays)
        os.replace(temporary, entry_path(folder, key))
        temporary = None
        _prune(folder)
    except OSError:
        pass
    finally:
        if temporary is not None:
            temporary.unlink(missing_ok=True)


def _column(name: str, values: np.ndarray) -> np.ndarray:
    if name in _TEXT_COLUMNS:
        return values.astype(object)
    if name in _WHOLE_COLUMNS:
        return values.astype(np.int64)
    return values


def _name(stored: np.ndarray) -> str | None:
    return str(stored[0]) if stored.size else None


def _prune(folder: Path) -> None:
    entries = sorted(folder.glob(f"{_PREFIX}*.npz"), key=lambda p: p.stat().st_mtime)
    for path in entries[: max(0, len(entries) - MOST_ENTRIES)]:
        path.unlink(missing_ok=True)

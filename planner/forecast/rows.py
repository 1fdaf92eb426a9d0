"""Which resampled rows a bootstrap path takes: drawn on their own, or chosen by a caller.

The residual bootstrap (:mod:`planner.forecast.bootstrap`) resamples rows of a pool: for the
recursive strategy, one-step residuals, one per day of a path; for the direct strategy, error
paths, one origin per path (and, for days an error path did not observe, another origin that
did). A *row chooser* decides which rows. :class:`RandomRows`, the default, draws them
uniformly from one generator, exactly as the bootstrap always has. A caller forecasting several
wards together passes a :class:`SharedRows` for each ward instead, which takes the rows of
days chosen once for all wards (:mod:`planner.forecast.joint`).

Rows are named by their day counted back from the history's last day (:class:`PoolRows`,
``back = 1`` for the last day): histories that end on the same day name the same date by the
same number, whatever their lengths.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Protocol

import numpy as np


@dataclass(frozen=True)
class PoolRows:
    """The rows a strategy's bootstrap resamples, each named by its day counted back from the
    history's last day (1 = the last day): for ``kind`` "recursive", the day of a one-step
    residual (the pool holds the last days of the history, oldest first); for "direct", the
    origin of an error path (its first forecast day), with ``known`` (rows x H) the days each
    error path observed."""

    kind: str
    back: np.ndarray
    known: np.ndarray | None = None


class RowChooser(Protocol):
    """What a bootstrap asks of its source of rows."""

    def shock_rows(self, n_rows: int, shape: tuple[int, int]) -> np.ndarray:
        """Row indices ``shape`` (paths x days) into a pool of the last ``n_rows`` days'
        one-step residuals."""
        ...

    def error_rows(self, known: np.ndarray, n_paths: int) -> np.ndarray:
        """Row indices ``(n_paths, H)`` into error paths observed where ``known`` (rows x H):
        a path's origin on each day, or another origin on the days its own did not observe."""
        ...

    def split(self) -> tuple[np.random.Generator, RowChooser]:
        """For the refit bootstrap: the generator of the rebuilt histories and the chooser of
        the paths' shocks."""
        ...


class RandomRows:
    """Rows drawn uniformly with replacement from ``rng``, independently for each path and day
    (error paths: one origin per path; a day its origin did not observe from the origins that
    did, which must be the first rows: :func:`planner.forecast.bootstrap.direct_paths`)."""

    def __init__(self, rng: np.random.Generator) -> None:
        self.rng = rng

    def shock_rows(self, n_rows: int, shape: tuple[int, int]) -> np.ndarray:
        return self.rng.integers(0, n_rows, size=shape)

    def error_rows(self, known: np.ndarray, n_paths: int) -> np.ndarray:
        origins = self.rng.integers(0, known.shape[0], size=n_paths)
        rows = np.broadcast_to(origins[:, None], (n_paths, known.shape[1]))
        if known.all():
            return rows
        observed = known.sum(axis=0)  # rows observing each horizon day: the first ones
        filled = self.rng.integers(0, observed[None, :], size=rows.shape)
        return np.where(known[origins], rows, filled)

    def split(self) -> tuple[np.random.Generator, RowChooser]:
        series_rng, shock_rng = self.rng.spawn(2)
        return series_rng, RandomRows(shock_rng)


def as_rows(source: np.random.Generator | RowChooser) -> RowChooser:
    """A row chooser from a generator (:class:`RandomRows`) or the chooser itself."""
    if isinstance(source, np.random.Generator):
        return RandomRows(source)
    return source


class SharedRows:
    """One ward's rows of days chosen for several wards at once.

    ``pool``: the ward's :class:`PoolRows`; ``chosen``: ``(n_paths, H)`` days counted back from
    the common last day, one per path and forecast day (for the direct strategy, the origin a
    path takes on that day), each a row of ``pool``; ``rng``: the ward's own generator, for
    the refit bootstrap's rebuilt histories (a child of it), which stay independent."""

    def __init__(self, pool: PoolRows, chosen: np.ndarray, rng: np.random.Generator) -> None:
        self.pool = pool
        self.chosen = np.asarray(chosen)
        self.rng = rng

    def _rows(self, kind: str, n_rows: int) -> np.ndarray:
        if self.pool.kind != kind or self.pool.back.shape[0] != n_rows:
            raise RuntimeError(
                f"shared rows: made for a {self.pool.kind} pool of {self.pool.back.shape[0]} "
                f"rows, asked for a {kind} pool of {n_rows}"
            )
        lookup = np.full(int(self.pool.back.max()) + 1, -1)
        lookup[self.pool.back] = np.arange(n_rows)
        inside = (self.chosen >= 1) & (self.chosen < lookup.shape[0])
        rows = np.where(inside, lookup[np.clip(self.chosen, 0, lookup.shape[0] - 1)], -1)
        if (rows < 0).any():
            raise RuntimeError("shared rows: a chosen day is not in the ward's pool")
        return rows

    def shock_rows(self, n_rows: int, shape: tuple[int, int]) -> np.ndarray:
        if tuple(shape) != self.chosen.shape:
            raise RuntimeError(f"shared rows: chosen for {self.chosen.shape}, asked {shape}")
        return self._rows("recursive", n_rows)

    def error_rows(self, known: np.ndarray, n_paths: int) -> np.ndarray:
        if (n_paths, known.shape[1]) != self.chosen.shape:
            raise RuntimeError(f"shared rows: chosen for {self.chosen.shape}, asked {n_paths}")
        rows = self._rows("direct", known.shape[0])
        if not known[rows, np.arange(known.shape[1])[None, :]].all():
            raise RuntimeError("shared rows: a chosen origin did not observe its day")
        return rows

    def split(self) -> tuple[np.random.Generator, RowChooser]:
        return self.rng.spawn(1)[0], self

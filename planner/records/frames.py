"""A ward's history given as pandas objects instead of files (the Python interface), checked
as the file readers check theirs.

``admissions``: daily emergency admissions, a Series of whole numbers >= 0 on consecutive days
(a DatetimeIndex, or a DataFrame with ``date`` and ``admissions`` columns). ``episodes``: a
DataFrame with ``admitted_at`` and ``discharged_at`` (date-times; NaT for a patient still on the
ward) and optionally ``method`` ("planned" or "emergency").
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from planner.errors import PlannerError

METHODS = ("planned", "emergency")


@dataclass(frozen=True)
class HistoryFrames:
    """The history as pandas objects (module docstring); None for one not given."""

    admissions: pd.Series | pd.DataFrame | None = None
    episodes: pd.DataFrame | None = None

    def checked_admissions(self) -> pd.Series | None:
        """The admissions as the daily reader gives them: int64 named ``admissions`` on a
        gap-free daily DatetimeIndex named ``date``."""
        series = self.admissions
        if series is None:
            return None
        if isinstance(series, pd.DataFrame):
            if not {"date", "admissions"} <= set(series.columns):
                raise PlannerError("admissions: a DataFrame needs columns date and admissions")
            series = series.set_index("date")["admissions"]
        try:
            index = pd.DatetimeIndex(pd.to_datetime(series.index))
        except (TypeError, ValueError):
            raise PlannerError("admissions: the index must hold dates") from None
        values = pd.to_numeric(pd.Series(series.to_numpy()), errors="coerce").to_numpy(float)
        bad = ~np.isfinite(values) | (values < 0) | (values != np.round(values))
        if bad.any():
            row = int(np.argmax(bad))
            raise PlannerError(
                f"admissions: {index[row].date()}: {series.iloc[row]!r} is not a whole number >= 0"
            )
        if len(index) == 0:
            raise PlannerError("admissions: no days given")
        steps = np.diff(index.to_numpy().astype("datetime64[D]").astype(np.int64))
        if np.any(steps != 1):
            row = int(np.argmax(steps != 1)) + 1
            raise PlannerError(
                f"admissions: {index[row].date()} follows {index[row - 1].date()}; give one "
                f"row per day, consecutive and in increasing order"
            )
        days = pd.DatetimeIndex(index.normalize(), name="date")
        return pd.Series(values.astype(np.int64), index=days, name="admissions")

    def checked_episodes(self) -> pd.DataFrame | None:
        """The episodes as the episode reader gives them."""
        frame = self.episodes
        if frame is None:
            return None
        missing = [name for name in ("admitted_at", "discharged_at") if name not in frame]
        if missing:
            raise PlannerError(f"episodes: missing column(s) {', '.join(missing)}")
        out = pd.DataFrame(index=pd.RangeIndex(len(frame)))
        for name in ("admitted_at", "discharged_at"):
            try:
                out[name] = pd.to_datetime(frame[name].to_numpy())
            except (TypeError, ValueError):
                raise PlannerError(f"episodes: {name} must hold date-times") from None
        if out.empty:
            raise PlannerError("episodes: no episodes given")
        if out["admitted_at"].isna().any():
            row = int(np.argmax(out["admitted_at"].isna().to_numpy()))
            raise PlannerError(f"episodes: row {row}: admitted_at is missing")
        before = (out["discharged_at"] < out["admitted_at"]).to_numpy()
        if before.any():
            row = int(np.argmax(before))
            raise PlannerError(f"episodes: row {row}: discharged_at is before admitted_at")
        if "method" in frame:
            method = frame["method"].astype(str).str.lower().to_numpy()
            unknown = ~np.isin(method, METHODS)
            if unknown.any():
                row = int(np.argmax(unknown))
                raise PlannerError(
                    f"episodes: row {row}: method {frame['method'].iloc[row]!r} is not one of "
                    f"{', '.join(METHODS)}"
                )
            out["method"] = method
        return out.sort_values("admitted_at", kind="stable").reset_index(drop=True)

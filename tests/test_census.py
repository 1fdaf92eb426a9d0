"""The census rebuilt from episode records: a hand-counted example, a brute-force count on
random records, and the speed asked of it (100,000 episodes well under a second)."""

from __future__ import annotations

import time

import numpy as np
import pandas as pd

from planner.records.census import census_history, census_series
from planner.records.ward_history import inpatients_at


def _episodes(rows):
    frame = pd.DataFrame(rows, columns=["admitted_at", "discharged_at"])
    return frame.apply(pd.to_datetime)


def test_hand_counted_example():
    episodes = _episodes(
        [
            ("2024-01-01 08:00", "2024-01-03 10:00"),  # A
            ("2024-01-01 20:00", "2024-01-02 00:00"),  # B, out exactly at midnight
            ("2024-01-02 00:00", "2024-01-02 12:00"),  # C, in exactly at midnight
            ("2024-01-02 12:00", None),  # D, in the minute C leaves; still on the ward
            ("2024-01-02 13:00", "2024-01-02 15:00"),  # E
            ("2024-01-03 09:00", "2024-01-03 23:00"),  # F
        ]
    )
    table = census_history(episodes)
    # Hand count (patients admitted before 24:00 and not discharged by then):
    #   24:00 Jan 1: A (B left at 24:00 exactly)                   -> 1
    #   24:00 Jan 2: A, D (C left 12:00, E left 15:00)             -> 2
    #   24:00 Jan 3: D (A left 10:00, F left 23:00)                -> 1
    # Peak during the day (discharges first at the same minute):
    #   Jan 1: A from 08:00, A+B from 20:00                        -> 2
    #   Jan 2: A at 00:00, A+C, then C out / D in at 12:00 (A+D), A+D+E at 13:00 -> 3
    #   Jan 3: A+D at 00:00, A+D+F at 09:00 until A leaves at 10:00 -> 3
    assert list(table["date"].dt.strftime("%m-%d")) == ["01-01", "01-02", "01-03"]
    assert list(table["census"]) == [1, 2, 1]
    assert list(table["peak_occupancy"]) == [2, 3, 3]
    series = census_series(episodes)
    assert series.loc["2024-01-02"] == 2 and series.name == "census"


def _random_episodes(rng, n, days=60):
    start = pd.Timestamp("2025-03-01")
    minutes = np.sort(rng.integers(0, days * 24 * 60, n))
    stay = rng.integers(0, 10 * 24 * 60, n)  # includes same-minute discharges
    admitted = start + pd.to_timedelta(minutes, unit="min")
    discharged = pd.Series(admitted + pd.to_timedelta(stay, unit="min"))
    discharged[rng.random(n) < 0.05] = pd.NaT
    return pd.DataFrame({"admitted_at": admitted, "discharged_at": discharged})


def test_matches_a_brute_force_count():
    episodes = _random_episodes(np.random.default_rng(3), 400)
    table = census_history(episodes)
    a = episodes["admitted_at"].to_numpy()
    d = episodes["discharged_at"].to_numpy()
    far = np.datetime64("2100-01-01")
    d = np.where(pd.isna(d), far, d)
    for day, census, peak in zip(
        table["date"], table["census"], table["peak_occupancy"], strict=True
    ):
        midnight = (day + pd.Timedelta(days=1)).to_datetime64()
        # Source: the definition, counted patient by patient; and
        # planner.records.ward_history.inpatients_at.
        assert census == np.sum((a < midnight) & (d > midnight))
        assert census == inpatients_at(episodes, pd.Timestamp(midnight)).size
        start = day.to_datetime64()
        moments = np.concatenate(([start], a[(a >= start) & (a < midnight)]))
        present = [(np.sum((a <= t) & (d > t))) for t in moments]
        assert peak == max(present)


def test_one_hundred_thousand_episodes_in_well_under_a_second():
    episodes = _random_episodes(np.random.default_rng(4), 100_000, days=3650)
    census_history(episodes.iloc[:100])  # warm up imports
    clock = time.perf_counter()
    table = census_history(episodes)
    elapsed = time.perf_counter() - clock
    assert len(table) >= 3650
    assert elapsed < 0.5, f"{elapsed:.2f} s"

"""Reading history files: good files parse, bad files give one line naming file and line."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from planner.errors import PlannerError
from planner.history import (
    admissions_from_episodes,
    completed_stays,
    inpatients_at,
    read_daily_admissions,
    read_episodes,
)


def write(tmp_path, text, name="input.csv", encoding="utf-8"):
    path = tmp_path / name
    path.write_bytes(text.encode(encoding))
    return path


def test_daily_counts_parse(tmp_path):
    path = write(tmp_path, "date,admissions\n2026-01-01,3\n2026-01-02,0\n2026-01-03,5\n")
    series = read_daily_admissions(path)
    assert list(series) == [3, 0, 5]
    assert series.index.freqstr == "D"
    assert series.index[0] == pd.Timestamp("2026-01-01")


@pytest.mark.parametrize(
    "text",
    [
        "\ufeffdate,admissions\r\n2026-01-01,3\r\n2026-01-02,4\r\n",  # byte-order mark, CRLF
        "date;admissions\n2026-01-01;3\n2026-01-02;4\n",  # semicolon separator
        "Date, Admissions\n2026-01-01, 3\n2026-01-02, 4\n",  # header case and spaces
    ],
)
def test_daily_counts_export_quirks_accepted(tmp_path, text):
    assert list(read_daily_admissions(write(tmp_path, text))) == [3, 4]


@pytest.mark.parametrize(
    ("text", "message"),
    [
        ("", "the file is empty"),
        ("date,admissions\n", "no data rows"),
        ("day,count\n2026-01-01,3\n", "missing column(s) date, admissions"),
        ("date,admissions\n01/02/2026,3\n", "line 2: date '01/02/2026' is not a date"),
        ("date,admissions\n2026-01-01,3\n2026-01-01,4\n", "line 3: date 2026-01-01 appears twice"),
        ("date,admissions\n2026-01-01,3\n2026-01-04,4\n", "line 3: days missing from 2026-01-02"),
        ("date,admissions\n2026-01-02,3\n2026-01-01,4\n", "line 3: dates are not in increasing"),
        ("date,admissions\n2026-01-01,-1\n", "line 2: admissions '-1' is not a non-negative"),
        ("date,admissions\n2026-01-01,2.5\n", "line 2: admissions '2.5' is not a non-negative"),
        ("date,admissions\n2026-01-01,many\n", "line 2: admissions 'many'"),
        ("date,admissions\n2026-01-01,\n", "line 2: admissions ''"),
    ],
)
def test_daily_counts_bad_input(tmp_path, text, message):
    path = write(tmp_path, text)
    with pytest.raises(PlannerError) as error:
        read_daily_admissions(path)
    assert str(path) in str(error.value)
    assert message in str(error.value)
    assert "\n" not in str(error.value)


def test_missing_file(tmp_path):
    with pytest.raises(PlannerError, match="file not found"):
        read_daily_admissions(tmp_path / "absent.csv")


EPISODES = """admitted_at,discharged_at
2026-01-01 10:00,2026-01-03 10:00
2026-01-01 22:00,
2026-01-02 08:30,2026-01-02 20:30
2026-01-04 12:00,2026-01-06 00:00
"""


def test_episodes_give_daily_counts_stays_and_inpatients(tmp_path):
    episodes = read_episodes(write(tmp_path, EPISODES))
    counts = admissions_from_episodes(episodes)
    # Hand count: 2 admissions on 1 Jan, 1 on 2 Jan, none on 3 Jan, 1 on 4 Jan; the file's
    # last event is the discharge at 00:00 on 6 Jan.
    assert list(counts) == [2, 1, 0, 1, 0, 0]
    assert counts.index[-1] == pd.Timestamp("2026-01-06")
    # Completed stays: 2 days, 0.5 day, 1.5 days (the open episode is not a stay yet).
    assert sorted(completed_stays(episodes)) == [0.5, 1.5, 2.0]
    # At 00:00 on 3 Jan: the first patient (in 1.583 days) and the open one (1.083 days).
    elapsed = inpatients_at(episodes, pd.Timestamp("2026-01-03"))
    np.testing.assert_allclose(elapsed, [26 / 24, 38 / 24])


@pytest.mark.parametrize(
    ("text", "message"),
    [
        ("admitted,left\n", "missing column(s) admitted_at, discharged_at"),
        (
            "admitted_at,discharged_at\n2026-01-02 10:00,2026-01-01 10:00\n",
            "line 2: discharged_at 2026-01-01 10:00 is before admitted_at",
        ),
        ("admitted_at,discharged_at\nyesterday,\n", "line 2: admitted_at 'yesterday' is not a"),
        ("admitted_at,discharged_at\n,2026-01-01 10:00\n", "line 2: admitted_at is empty"),
    ],
)
def test_episodes_bad_input(tmp_path, text, message):
    path = write(tmp_path, text)
    with pytest.raises(PlannerError) as error:
        read_episodes(path)
    assert message in str(error.value)
    assert str(path) in str(error.value)

"""Reading history files: good files parse, bad files give one line naming file and line."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from wards import ROTA

from planner.errors import PlannerError
from planner.forecast.requirements import check_history_length, days_needed
from planner.records.files import (
    HistoryFormat,
    admissions_from_episodes,
    episodes_end,
    read_daily_admissions,
    read_episodes,
)
from planner.records.ward_history import inpatients_at, stays_at


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
        (
            "date,admissions\n2026-01-01,3\n2026-01-03,4\n2026-01-02,1\n",
            "line 4: dates are not in increasing",
        ),
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
    # Completed stays: 2 days, 0.5 day, 1.5 days; the open episode is censored (in 4 days
    # 2 hours at 00:00 on 6 Jan).
    durations, observed = stays_at(episodes, pd.Timestamp("2026-01-06"))
    assert sorted(durations[observed]) == [0.5, 1.5, 2.0]
    np.testing.assert_allclose(durations[~observed], [4 + 2 / 24])
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


def test_declared_formats_and_filled_days(tmp_path):
    form = HistoryFormat(date_format="%d/%m/%Y", fill_missing_days=True)
    path = write(tmp_path, "date,admissions\n30/12/2025,3\n02/01/2026,4\n03/01/2026,0\n")
    series = read_daily_admissions(path, form)
    # 30 Dec, then 31 Dec and 1 Jan filled with 0, then 2 and 3 Jan (counted by hand).
    assert list(series) == [3, 0, 0, 4, 0]
    assert series.index[0] == pd.Timestamp("2025-12-30") and series.index.freqstr == "D"
    episodes = read_episodes(
        write(tmp_path, "admitted_at,discharged_at\n30/12/2025 22:10,02/01/2026 09:00\n"),
        HistoryFormat(timestamp_format="%d/%m/%Y %H:%M"),
    )
    assert episodes["admitted_at"].iloc[0] == pd.Timestamp("2025-12-30 22:10")
    durations, _ = stays_at(episodes, pd.Timestamp("2026-02-01"))
    np.testing.assert_allclose(durations, [(2 * 24 + 10 + 50 / 60) / 24])


def test_month_first_read_as_day_first_is_caught(tmp_path):
    """A wrongly declared format cannot pass quietly on a daily series: month-first dates
    read day-first jump by a month (or fail) and the gap check stops them."""
    path = write(tmp_path, "date,admissions\n01/02/2026,3\n01/03/2026,4\n")  # Jan 2, Jan 3
    with pytest.raises(PlannerError, match="line 3: days missing from 2026-02-02"):
        read_daily_admissions(path, HistoryFormat(date_format="%d/%m/%Y"))


# --- how much history the forecast needs -------------------------------------------------

FAST = {"max_lag": 7, "backtest_origins": 3, "backtest_paths": 10, "annual": False}


@pytest.mark.parametrize(
    ("settings", "expected"),
    [
        # 2 x 7 + 7 calendar terms (constant + 6 weekdays) + 14 spare = 35
        ({"strategy": "recursive"}, 35),
        ({"strategy": "recursive", "order": 3}, 27),  # 2 x 3 + 7 + 14
        ({"strategy": "direct"}, 35 + 14),  # plus the 14 forecast days
        ({"strategy": "direct", "trend": True, "weekday": False}, 2 * 7 + 2 + 14 + 14),
        # 3 origins x 7 days + max(49, 7 + 14 + 30 = 51)
        ({"strategy": "auto"}, 21 + 51),
        ({"strategy": "recursive", "residuals": "backtest", "max_lag": 14}, 21 + 2 * 14 + 7 + 28),
    ],
)
def test_days_needed_is_enough_for_the_forecast(settings, expected):
    """The rule is checked against the forecast engine: a history of exactly the days asked
    for forecasts without error or warning; one day fewer is refused naming the file."""
    from planner.forecast.pipeline import forecast_admissions
    from planner.forecast.settings import ForecastSettings

    forecast = ForecastSettings(**(FAST | settings))
    needed, reason = days_needed(forecast, 14, 0)
    assert needed == expected, reason
    rng = np.random.default_rng(3)
    history = pd.Series(
        rng.poisson(6.0, needed), index=pd.date_range("2025-01-06", periods=needed, freq="D")
    )
    result = forecast_admissions(history, forecast, 14, 10, np.random.default_rng(4))
    assert result.paths.shape == (10, 14) and np.isfinite(result.paths).all()
    check_history_length(history, forecast, 14, "ward.csv")
    with pytest.raises(PlannerError, match=rf"ward.csv: history too short: {needed - 1} days"):
        check_history_length(history.iloc[1:], forecast, 14, "ward.csv")


# --- properties of the episode arithmetic ------------------------------------------------

MINUTES = 60 * 24 * 30  # episodes within 30 days
ORIGIN = pd.Timestamp("2026-03-01")
episode_lists = st.lists(
    st.tuples(st.integers(0, MINUTES), st.one_of(st.none(), st.integers(0, 5 * 24 * 60))),
    min_size=1,
    max_size=40,
)


def as_episodes(items) -> pd.DataFrame:
    admitted = [ORIGIN + pd.Timedelta(minutes=a) for a, _ in items]
    discharged = [pd.NaT if s is None else a + pd.Timedelta(minutes=s) for a, (_, s) in
                  zip(admitted, items, strict=True)]  # fmt: skip
    return pd.DataFrame(
        {"admitted_at": pd.to_datetime(admitted), "discharged_at": pd.to_datetime(discharged)}
    )


@settings(max_examples=60, deadline=None)
@given(items=episode_lists, end_day=st.one_of(st.none(), st.integers(0, 40)))
def test_daily_counts_sum_to_the_episodes_in_range(items, end_day):
    episodes = as_episodes(items)
    end = None if end_day is None else ORIGIN + pd.Timedelta(days=end_day)
    last = episodes_end(episodes) if end is None else end
    days = [ORIGIN + pd.Timedelta(minutes=a) for a, _ in items]
    in_range = [d.normalize() for d in days if d.normalize() <= last]
    if not in_range:
        return
    counts = admissions_from_episodes(episodes, end)
    assert counts.sum() == len(in_range)
    assert (counts >= 0).all() and counts.index.is_monotonic_increasing
    assert len(counts) == (last - min(in_range)).days + 1  # every day, none skipped
    for day in set(in_range):  # brute force, day by day
        assert counts[day] == in_range.count(day)


@settings(max_examples=60, deadline=None)
@given(items=episode_lists, at_minute=st.integers(-60, MINUTES + 6 * 24 * 60))
def test_inpatients_match_a_brute_force_count(items, at_minute):
    episodes = as_episodes(items)
    moment = ORIGIN + pd.Timedelta(minutes=at_minute)
    elapsed = inpatients_at(episodes, moment)
    expected = sorted(
        (moment - row.admitted_at) / pd.Timedelta(days=1)
        for row in episodes.itertuples()
        if row.admitted_at < moment and (pd.isna(row.discharged_at) or row.discharged_at > moment)
    )
    assert (elapsed >= 0).all()
    np.testing.assert_allclose(elapsed, expected, rtol=0, atol=1e-9)


# --- a long history -----------------------------------------------------------------------


def long_ward(folder, years: int, episodes: int) -> None:
    """A daily file of ``years`` years and an episode file of ``episodes`` stays."""
    rng = np.random.default_rng(1)
    days = pd.date_range("2000-01-01", periods=round(365.25 * years), freq="D")
    counts = rng.multinomial(episodes, np.full(len(days), 1.0 / len(days)))
    day_of = np.repeat(np.arange(len(days)), counts)
    admitted = days[day_of] + pd.to_timedelta(rng.integers(0, 1440, episodes), unit="min")
    stay = pd.to_timedelta(rng.integers(60, 10 * 1440, episodes), unit="min")
    discharged = (admitted + stay).where(admitted + stay < days[-1], pd.NaT)
    pd.DataFrame({"date": days.strftime("%Y-%m-%d"), "admissions": counts}).to_csv(
        folder / "ward.csv", index=False
    )
    pd.DataFrame(
        {
            "admitted_at": admitted.strftime("%Y-%m-%d %H:%M"),
            "discharged_at": pd.Series(discharged.strftime("%Y-%m-%d %H:%M")).fillna(""),
        }
    ).to_csv(folder / "episodes.csv", index=False)
    (folder / "plan.toml").write_text(  # beds enough for the invented records' census
        '[history]\nadmissions = "ward.csv"\nepisodes = "episodes.csv"\n[beds]\nbase = 500\n' + ROTA
    )


PEAK_RSS = """
import resource, sys
from planner.runs.run import check_scenario
print(check_scenario(sys.argv[1])[2])
print(resource.getrusage(resource.RUSAGE_SELF).ru_maxrss)
"""


def test_long_history_checks(tmp_path):
    """Fast version: 3 years, 10,000 episodes through ``planner check``."""
    from click.testing import CliRunner

    from planner.cli import cli

    long_ward(tmp_path, 3, 10_000)
    result = CliRunner().invoke(cli, ["check", str(tmp_path / "plan.toml")])
    assert result.exit_code == 0, result.output
    assert "history: 1096 days, 2000-01-01 to 2002-12-31" in result.output
    assert "episodes: 10000" in result.output


@pytest.mark.slow
def test_twenty_years_and_100000_episodes_fit_in_memory(tmp_path):
    """20 years daily and 100,000 episodes: ``check`` in its own process stays under
    600 MB peak resident memory (about 210 MB measured) (ru_maxrss is in kilobytes on Linux)."""
    long_ward(tmp_path, 20, 100_000)
    done = subprocess.run(
        [sys.executable, "-c", PEAK_RSS, str(tmp_path / "plan.toml")],
        capture_output=True,
        text=True,
        check=True,
        cwd=Path(__file__).resolve().parents[1],
        timeout=300,
    )
    summary, peak_kb = done.stdout.strip().splitlines()
    assert summary.startswith("history: 7305 days, 2000-01-01 to 2019-12-31")
    assert int(peak_kb) < 600_000, f"peak RSS {int(peak_kb) / 1024:.0f} MB"


def test_open_episodes_may_share_an_admission_minute(tmp_path):
    text = "admitted_at,discharged_at\n2026-01-01 08:00,\n2026-01-01 08:00,\n"
    assert len(read_episodes(write(tmp_path, text))) == 2


def test_exports_as_they_come_still_in_markers_seconds_and_windows_text(tmp_path):
    # Common practice in hospital exports: NULL or NA for a patient still on the ward,
    # timestamps with seconds, Windows-1252 ("ANSI") text with a non-ASCII header note.
    text = (
        "admitted_at;discharged_at;note\n"
        "01/11/2026 10:00:30;03/11/2026 12:00:15;caf\xe9\n"
        "02/11/2026 09:00;NULL;\n"
        "02/11/2026 11:00;n/a;\n"
    )
    path = write(tmp_path, text, "episodes.csv", encoding="cp1252")
    episodes = read_episodes(path, HistoryFormat(timestamp_format="%d/%m/%Y %H:%M"))
    assert episodes["admitted_at"].tolist() == [
        pd.Timestamp("2026-11-01 10:00:30"),
        pd.Timestamp("2026-11-02 09:00"),
        pd.Timestamp("2026-11-02 11:00"),
    ]
    assert episodes["discharged_at"].iloc[0] == pd.Timestamp("2026-11-03 12:00:15")
    assert episodes["discharged_at"].iloc[1:].isna().all()


def test_a_file_of_several_wards_is_refused(tmp_path):
    # Common practice: one ward's plan from one ward's records; a whole-hospital export read
    # as one ward gave a 100% chance of no free bed without a word.
    text = (
        "admitted_at,discharged_at,ward\n"
        "2026-11-01 10:00,2026-11-03 12:00,Larch\n"
        "2026-11-02 09:00,,Rowan\n"
        "2026-11-02 11:00,,Larch\n"
    )
    with pytest.raises(PlannerError) as error:
        read_episodes(write(tmp_path, text, "episodes.csv"))
    assert str(error.value) == (
        f"{tmp_path / 'episodes.csv'}: column ward names 2 wards (Larch, Rowan); planner reads "
        "one ward's records: name the ward to plan with history.ward, or export one file per ward"
    )
    one_ward = text.replace("Rowan", "Larch")
    assert len(read_episodes(write(tmp_path, one_ward, "one.csv"))) == 3
    # Once a ward is named the file may hold several: its rows are kept.
    larch = read_episodes(tmp_path / "episodes.csv", HistoryFormat(wards=("larch",)))
    assert larch["admitted_at"].tolist() == [
        pd.Timestamp("2026-11-01 10:00"),
        pd.Timestamp("2026-11-02 11:00"),
    ]

"""The demo hospital (scenarios/generate_hospital.py): its export, read through the demo
scenarios' [history] mapping, against the generator's own truth and its own parameters.

The generator simulates the fictional Kestrel Vale District Hospital with its beds and writes
what each ward's records show; it keeps, beside the export, the admissions and the census at
24:00 it counted itself. The discharge checks are known-process tests: the export was drawn
from the generator's hazard and hour profile, and the tool's fit must recover them within its
standard errors.
"""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner
from wards import demo_generator

from planner.cli import cli
from planner.records.census import census_history
from planner.records.files import admissions_from_episodes, read_episodes
from planner.scenario import load_scenario
from planner.simulate.discharge_fit import fit_discharge_timing

SCENARIOS = Path(__file__).resolve().parents[1] / "scenarios"
#: Each ward's demo scenario.
PLANS = {"Larch": "baseline.toml", "Alder": "surgical_ward.toml",
         "Rowan": "older_peoples_ward.toml"}  # fmt: skip
#: Wards with one kind of admission: their records follow the fitted model exactly. Alder mixes
#: planned and emergency stays, which the tool does not yet fit apart.
ONE_STREAM = ("Larch", "Rowan")
#: Checks against a fitted value allow this many standard errors (a two-sided 0.3% chance of
#: a false alarm per check when the fit's normal approximation holds).
Z = 3.0


GENERATOR = demo_generator()
WARDS = {ward.name: ward for ward in GENERATOR.WARDS}


@pytest.fixture(scope="module")
def truth() -> pd.DataFrame:
    return pd.read_csv(GENERATOR.TRUTH, parse_dates=["date"])


def ward_episodes(ward: str, workbook: bool = False) -> pd.DataFrame:
    """The ward's episodes read from the export with the ward's demo scenario's keys."""
    plan = load_scenario(SCENARIOS / PLANS[ward])
    form = plan.history_format
    if workbook:
        return read_episodes(GENERATOR.WORKBOOK, replace(form, episodes_sheet="Stays"))
    assert plan.episodes_file == GENERATOR.EXPORT
    return read_episodes(plan.episodes_file, form)


@pytest.mark.parametrize("workbook", [False, True], ids=["csv", "xlsx"])
@pytest.mark.parametrize("ward", list(PLANS))
def test_the_export_gives_the_generators_admissions_and_census(truth, ward, workbook):
    episodes = ward_episodes(ward, workbook)
    admissions = admissions_from_episodes(episodes)
    census = census_history(episodes, last_day=admissions.index[-1])
    expected = truth[truth["ward"] == ward].set_index("date")
    # Source: the generator's truth (its own count of bed takings and of patients in beds at
    # each 24:00). The records' first day is the ward's first admission, so any earlier days
    # of the truth are empty; the last day is the generator's LAST_DAY.
    assert admissions.index[-1] == pd.Timestamp(GENERATOR.LAST_DAY)
    before = expected.index < admissions.index[0]
    assert (expected.loc[before, ["admissions", "census"]] == 0).all().all()
    expected = expected[~before]
    assert admissions.index.equals(expected.index)
    np.testing.assert_array_equal(admissions.to_numpy(), expected["admissions"].to_numpy())
    np.testing.assert_array_equal(census["census"].to_numpy(), expected["census"].to_numpy())


@pytest.mark.parametrize("ward", list(PLANS))
def test_no_ward_is_ever_over_its_beds(ward):
    episodes = ward_episodes(ward)
    peak = census_history(episodes)["peak_occupancy"].max()
    # Source: the generator's parameters (known process): a patient without a free bed waits
    # and is recorded from the bed, so occupancy never passes the ward's beds, at any moment.
    assert peak <= WARDS[ward].beds
    # Source: the same: the wards do fill up (the generator's patients waited on full wards),
    # so the check above is not met by an empty ward.
    assert peak == WARDS[ward].beds


def test_the_export_holds_what_a_hospital_export_holds():
    text = GENERATOR.EXPORT.read_text().splitlines()
    # Source: the generator's docstring: its header, day-first times, NULL for a patient
    # still in, emergency and elective methods, synthetic ids.
    assert text[0] == ",".join(GENERATOR.HEADER)
    rows = [line.split(",") for line in text[1:]]
    assert {row[1] for row in rows} == set(PLANS)
    assert {row[3] for row in rows} == {"Emergency", "Elective"}
    assert {row[1] for row in rows if row[3] == "Elective"} == {"Alder"}
    assert 0 < sum(row[5] == "NULL" for row in rows) < 100
    assert all(row[0].startswith("KV") for row in rows)
    assert len({row[0] for row in rows}) == len(rows)
    planned = ward_episodes("Alder")
    planned = planned[planned["method"] == "planned"]
    on_time = planned["admitted_at"].dt.strftime("%H:%M") == "07:30"
    # Source: the generator's parameters: planned patients are booked for 07:30, Monday to
    # Friday; one who waited for a bed is recorded when they got it (most did not wait).
    assert (planned.loc[on_time, "admitted_at"].dt.day_of_week < 5).all()
    assert on_time.mean() > 0.8
    # Source: common practice: a few MB at most in the repository.
    for path in (GENERATOR.EXPORT, GENERATOR.WORKBOOK, GENERATOR.TRUTH):
        assert path.stat().st_size < 2_000_000, path


def test_check_reads_the_admission_method_of_each_ward():
    rows = [line.split(",") for line in GENERATOR.EXPORT.read_text().splitlines()[1:]]
    readme = (SCENARIOS.parent / "README.md").read_text()
    for ward, plan in PLANS.items():
        result = CliRunner().invoke(cli, ["check", str(SCENARIOS / plan)])
        assert result.exit_code == 0, result.output
        mine = [row for row in rows if row[1] == ward]
        planned = sum(row[3] == "Elective" for row in mine)
        # Source: the export's own rows, counted as text: every stay of the ward is read and
        # its admission method with it (planned patients are not left out of the history).
        line = f"episodes: {len(mine)} ({len(mine) - planned} emergency, {planned} planned)"
        assert line in result.output
        assert f"{len(mine)} of {len(rows)} rows read (ward {ward})" in result.output
        if ward == "Alder":  # Source: the README's worked example quotes these lines.
            assert " ".join(line.split()) in " ".join(readme.split())


def test_the_committed_files_are_the_generators():
    table, truth = GENERATOR.hospital()
    committed = pd.read_csv(GENERATOR.TRUTH, parse_dates=["date"])
    # Source: the generator with its committed seed: the committed files are its output.
    pd.testing.assert_frame_equal(truth.reset_index(drop=True), committed, check_dtype=False)
    export = pd.read_csv(GENERATOR.EXPORT, dtype=str, keep_default_na=False)
    assert export["Patient ID"].tolist() == table["patient"].tolist()
    written = table["admitted_at"].dt.strftime(GENERATOR.DAY_FIRST)
    assert export["Admission Date"].tolist() == written.tolist()


def fitted(ward: str):
    """The tool's discharge fit on the ward's records as known after the last day."""
    episodes = ward_episodes(ward)[["admitted_at", "discharged_at"]]
    moment = pd.Timestamp(GENERATOR.LAST_DAY) + pd.Timedelta(days=1)
    return fit_discharge_timing(episodes, moment), episodes


@pytest.mark.parametrize("ward", ONE_STREAM)
def test_the_fit_recovers_the_weekend_dip_and_the_hazard(ward):
    timing, _ = fitted(ward)
    expected = np.log(GENERATOR.DISCHARGE_ODDS)
    # Source: the generator's parameters (known process): weekday odds of discharge relative
    # to Monday (Saturday 0.55, Sunday 0.50), within Z standard errors of the fit.
    assert np.all(np.abs(timing.beta - expected) <= Z * timing.beta_se)
    assert np.exp(timing.beta[5:]).max() < 0.7  # the dip is found, not merely allowed
    hazard = np.array(WARDS[ward].hazard)
    days = np.arange(10)
    base = hazard[np.minimum(days, hazard.size - 1)]
    # Source: the generator's parameters (known process): Monday hazards of days of stay 0-9.
    logit = np.log(base / (1 - base))
    assert np.all(np.abs(timing.alpha[days] - logit) <= Z * timing.alpha_se[days])


def expected_hour_shares(episodes: pd.DataFrame) -> np.ndarray:
    """The generator's share of discharges by hour for these completed episodes: its profile,
    or on the day the bed was taken the profile after the bed time (evenly over the rest of
    the day when it holds nothing later), as the generator draws them."""
    done = episodes.dropna()
    profile = GENERATOR.DISCHARGE_HOURS
    same_day = done["discharged_at"].dt.normalize() == done["admitted_at"].dt.normalize()
    total = profile * (~same_day).sum()
    edges = np.arange(25.0)
    for moment in done.loc[same_day, "admitted_at"]:
        after = moment.hour + moment.minute / 60
        inside = np.clip(edges[1:] - np.maximum(edges[:-1], after), 0, 1)
        mass = profile * inside
        total += mass / mass.sum() if mass.sum() > 1e-12 else inside / (24 - after)
    return total / len(done)


@pytest.mark.parametrize("ward", ONE_STREAM)
def test_the_fit_recovers_the_afternoon_discharge_hours(ward):
    timing, episodes = fitted(ward)
    expected = expected_hour_shares(episodes)
    n = int(episodes["discharged_at"].notna().sum())
    for hours in (slice(12, 18), slice(0, 12), slice(18, 24)):
        share, truth = timing.pooled_profile[hours].sum(), expected[hours].sum()
        # Source: the generator's parameters (known process); binomial standard error of a
        # share of n discharges.
        assert abs(share - truth) <= Z * np.sqrt(truth * (1 - truth) / n), hours
    # Source: the generator's parameters: 71% of discharges 12:00-18:00 (afternoon-heavy).
    assert timing.pooled_profile[12:18].sum() > 0.6


def test_hindcast_scores_against_the_generators_census(tmp_path, truth, ward="Alder"):
    """The fast version of the check below: one ward, one past start date, few paths."""
    out = tmp_path / "hindcast"
    arguments = ["--origins", "1", "--paths", "50", "--jobs", "1", "--out", str(out)]
    result = CliRunner().invoke(cli, ["hindcast", str(SCENARIOS / PLANS[ward]), *arguments])
    assert result.exit_code == 0, result.output
    scored = pd.read_csv(out / "hindcast.csv", parse_dates=["date"]).set_index("date")
    expected = truth[truth["ward"] == ward].set_index("date")["census"]
    # Source: the generator's truth: the census a hindcast is scored against is the one that
    # happened, and the ward's beds are the generator's.
    assert len(scored) > 0
    np.testing.assert_array_equal(scored["census"], expected.reindex(scored.index))
    assert (scored["beds_open"] == WARDS[ward].beds).all()


@pytest.mark.slow
@pytest.mark.parametrize("ward", list(PLANS))
def test_hindcast_bands_hold_70_to_90_percent(tmp_path, ward):
    out = tmp_path / "hindcast"
    result = CliRunner().invoke(cli, ["hindcast", str(SCENARIOS / PLANS[ward]), "--out", str(out)])
    assert result.exit_code == 0, result.output
    summary = pd.read_csv(out / "hindcast_summary.csv")
    overall = summary[summary["horizon_week"] == 0].iloc[0]
    # Source: issue 14's acceptance band for the model's 80% census band on the demo.
    assert 0.70 <= overall["model_coverage_80"] <= 0.90

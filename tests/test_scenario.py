"""Scenario files: defaults, extends, and one-line errors naming the key path."""

from __future__ import annotations

import shutil
from dataclasses import replace
from datetime import date
from pathlib import Path

import pytest
from wards import ROTA

from planner.errors import PlannerError
from planner.forecast.settings import ForecastSettings
from planner.records.files import HistoryFormat
from planner.scenario import demo_scenario_path, load_scenario
from planner.schema import TABLES, TOP, document
from planner.simulate.settings import StaffingSettings, StaySettings, WardSettings

DEMO = Path(__file__).resolve().parents[1] / "scenarios"


def scenario(tmp_path, text, name="plan.toml"):
    (tmp_path / "ward.csv").write_text("date,admissions\n2026-01-01,3\n")
    path = tmp_path / name
    stay = "" if "[stay]" in text else "[stay]\nmean = 5.0\nsd = 4.0\n"
    beds = "" if "[beds]" in text else "[beds]\nbase = 28\n"
    rota = "" if "staffing.shift" in text else ROTA
    path.write_text(text + '\n[history]\nadmissions = "ward.csv"\n' + stay + beds + rota)
    return path


def test_demo_scenarios_load():
    assert demo_scenario_path().name == "baseline.toml"
    base = load_scenario()
    assert base.ward.beds == 28
    assert [shift.name for shift in base.ward.staffing.shifts] == ["day", "night"]
    winter = load_scenario(DEMO / "winter_escalation.toml")
    assert winter.ward.bed_changes[0].change == 4
    assert winter.ward.staffing.shifts == base.ward.staffing.shifts  # inherited
    assert winter.episodes_file == base.episodes_file  # path resolved in the base file
    assert load_scenario(DEMO / "shorter_stays.toml").stay.change_days == -0.5


def test_defaults(tmp_path):
    plan = load_scenario(scenario(tmp_path, ""))
    assert (plan.horizon_weeks, plan.paths, plan.horizon_days) == (13, 1000, 91)
    assert plan.forecast.max_lag == 28 and plan.forecast.strategy == "auto"
    assert plan.ward.policy == "wait" and plan.ward.staffing.minimum_nurses == 2
    assert plan.name == "plan"
    assert (plan.forecast.backtest_paths, plan.forecast.refit_series) == (200, 50)


def test_settings_defaults_are_the_scenario_defaults(tmp_path):
    plan = load_scenario(scenario(tmp_path, ""))
    assert plan.forecast == ForecastSettings()
    assert replace(plan.ward, staffing=StaffingSettings()) == WardSettings(beds=28)
    assert replace(plan.stay, mean=None, sd=None) == StaySettings()


@pytest.mark.parametrize(
    ("text", "message"),
    [
        ("[beds]\npolicy = 'divert'\n", "beds.base: required: the beds this ward normally has"),
        ("[beds]\nbase = 20\n[staffing]\nminimum_nurses = 2\n# no shifts\n",
         "staffing.shift: required: the ward's nurse rota"),
    ],
)  # fmt: skip
def test_beds_and_rota_are_never_assumed(tmp_path, text, message):
    path = tmp_path / "plan.toml"
    (tmp_path / "ward.csv").write_text("date,admissions\n2026-01-01,3\n")
    rota = ROTA if "beds.base" in message else ""
    path.write_text(
        text + '[history]\nadmissions = "ward.csv"\n[stay]\nmean = 5.0\nsd = 4.0\n' + rota
    )
    with pytest.raises(PlannerError, match=message):
        load_scenario(path)
    text = next(table.doc for table in TABLES if table.name == "staffing.shift")
    assert "no rota is assumed" in text


def test_backtest_paths_and_refit_series_are_read(tmp_path):
    plan = load_scenario(scenario(tmp_path, "[forecast]\nbacktest_paths = 60\nrefit_series = 9\n"))
    assert (plan.forecast.backtest_paths, plan.forecast.refit_series) == (60, 9)


def test_extends_overrides_only_what_changes(tmp_path):
    scenario(tmp_path, "paths = 50\n[beds]\nbase = 20\npolicy = 'divert'\n", name="base.toml")
    child = tmp_path / "child.toml"
    child.write_text('extends = "base.toml"\n[beds]\nbase = 24\n')
    plan = load_scenario(child)
    assert (plan.ward.beds, plan.ward.policy, plan.paths) == (24, "divert", 50)


def test_extends_cycle_is_refused(tmp_path):
    (tmp_path / "a.toml").write_text('extends = "b.toml"\n')
    (tmp_path / "b.toml").write_text('extends = "a.toml"\n')
    with pytest.raises(PlannerError, match=r"extends: cycle \(a.toml -> b.toml -> a.toml\)"):
        load_scenario(tmp_path / "a.toml")


@pytest.mark.parametrize(
    ("text", "message"),
    [
        ("horizon_weeks = 0\n", "horizon_weeks: must be >= 1"),
        ("paths = -5\n", "paths: must be >= 1"),
        ("paths = 'many'\n", "paths: must be a whole number"),
        ("[beds]\nbase = 0\n", "beds.base: must be >= 1"),
        ("[beds]\nbeds = 3\n", "beds.beds: unknown key (did you mean 'base'?)"),
        ("[bed]\nbase = 3\n", "bed: unknown key (did you mean 'beds'?)"),
        ("[beds]\npolicy = 'queue'\n", "beds.policy: must be one of wait, divert"),
        (
            "[[beds.change]]\nstart = 2026-02-01\nend = 2026-01-01\nchange = 2\n",
            "beds.change[1]: end 2026-01-01 is before start 2026-02-01",
        ),
        ("[[beds.change]]\nstart = 2026-02-01\nchange = 2\n", "beds.change[1].end: required"),
        (
            "[[staffing.override]]\nstart = 2026-02-01\nend = 2026-01-01\nshift = 'day'\n"
            "nurses = 3\n",
            "staffing.override[1]: end 2026-01-01 is before start 2026-02-01",
        ),
        (
            "[[demand.surge]]\nstart = 2026-02-01\nend = 2026-01-01\nfactor = 1.2\n",
            "demand.surge[1]: end 2026-01-01 is before start 2026-02-01",
        ),
        (
            "[[staffing.shift]]\nname = 'day'\nstart = '07:00'\nend = '19:00'\n"
            "patients_per_nurse = 0\nroster = [1,1,1,1,1,1,1]\n",
            "staffing.shift[1].patients_per_nurse: must be > 0",
        ),
        (
            "[[staffing.shift]]\nname = 'day'\nstart = '07:00'\nend = '19:00'\n"
            "patients_per_nurse = 4\nroster = [1,1,1]\n",
            "roster: must be a list of 7",
        ),
        (
            "[[staffing.shift]]\nname = 'day'\nstart = '07:00'\nend = '19:00'\n"
            "patients_per_nurse = 4\nroster = [1,1,1,1,1,1,1]\n",
            "hours uncovered, gap between 'day' (ends 19:00) and 'day' (starts 07:00)",
        ),
        (
            "[[staffing.shift]]\nname = 'day'\nstart = '07:00'\nend = '20:00'\n"
            "patients_per_nurse = 4\nroster = [1,1,1,1,1,1,1]\n"
            "[[staffing.shift]]\nname = 'night'\nstart = '19:00'\nend = '07:00'\n"
            "patients_per_nurse = 7\nroster = [1,1,1,1,1,1,1]\n",
            "'day' (07:00-20:00) overlaps 'night' (starts 19:00)",
        ),
        (
            "[[staffing.override]]\nstart = 2026-01-01\nend = 2026-01-02\nshift = 'late'\n"
            "nurses = 3\n",
            "staffing.override[1].shift: no shift named 'late'",
        ),
        ("[forecast]\nstrategy = 'best'\n", "forecast.strategy: must be one of recursive"),
        ("[forecast]\ncriterion = 'hqic'\n", "forecast.criterion: must be one of aic, bic"),
        ("[forecast]\nresiduals = 'oos'\n", "forecast.residuals: must be one of in_sample"),
        ("[forecast]\nmax_lag = 0\n", "forecast.max_lag: must be >= 1, got 0"),
        ("[forecast]\norder = -1\n", "forecast.order: must be >= 0, got -1"),
        ("[forecast]\nmin_lag = -1\n", "forecast.min_lag: must be >= 0, got -1"),
        (
            "[forecast]\nmax_lag = 7\nmin_lag = 8\n",
            "forecast.min_lag: must be <= forecast.max_lag (7), got 8",
        ),
        ("[[forecast.level_change]]\nrelative_change = 0.1\n", "level_change[1].date: required"),
        (
            "[[forecast.level_change]]\ndate = 2026-01-05\nrelative_change = -1.0\n",
            "forecast.level_change[1].relative_change: must be > -1, got -1.0",
        ),
        (
            "[[forecast.level_change]]\ndate = 2026-01-05\n"
            "[[forecast.level_change]]\ndate = 2026-01-05\nrelative_change = 0.1\n",
            "forecast.level_change[2].date: 2026-01-05 is also the date of "
            "forecast.level_change[1]",
        ),
        ("[forecast]\nrefit_series = 0\n", "forecast.refit_series: must be >= 1, got 0"),
        ("[forecast]\nfourier_pairs = 0\n", "forecast.fourier_pairs: must be >= 1, got 0"),
        ("[forecast]\nannual = 'yes'\n", 'forecast.annual: must be true, false or "auto"'),
        ("[demand]\ngrowth = -1.0\n", "demand.growth: must be > -1, got -1.0"),
        (
            "[[demand.surge]]\nstart = 2026-01-01\nend = 2026-01-02\nfactor = 0\n",
            "demand.surge[1].factor: must be > 0, got 0",
        ),
        ("[stay]\nmean = 5.0\nscale = -1\n", "stay.scale: must be > 0"),
        ("[stay]\nmodel = 'normal'\nmean = 5.0\nsd = 4.0\n", "stay.model: must be one of"),
        ("[stay]\nmean = -2.0\nsd = 1.0\n", "stay.mean: must be > 0, got -2.0"),
        ("[stay]\nsd = 1.0\n", "stay.sd: given without stay.mean"),
        ("[stay]\nmodel = 'gamma'\nmean = 2.0\n", "stay.sd: required with stay.mean for model"),
        (
            "[stay]\nmodel = 'exponential'\nmean = 2.0\nsd = 1.0\n",
            "stay.sd: an exponential stay has sd equal to its mean",
        ),
        ("[stay]\nmean = nan\nsd = 1.0\n", "stay.mean: must be a finite number, got nan"),
        (
            "[stay]\nmean = 5.0\nsd = 4.0\nchange_days = -inf\n",
            "stay.change_days: must be a finite number, got -inf",
        ),
        ("[staffing]\nminimum_nurses = 0\n", "staffing.minimum_nurses: must be >= 1, got 0"),
        (
            "[[staffing.override]]\nstart = 2026-01-01\nend = 2026-01-02\nshift = 'day'\n"
            "nurses = -1\n",
            "staffing.override[1].nurses: must be >= 0, got -1",
        ),
        (
            "[[staffing.shift]]\nname = 'day'\nstart = '07:00'\nend = '19:00'\n"
            "patients_per_nurse = 4\nroster = [1,1,1,1,1,1,1]\n"
            "[[staffing.shift]]\nname = 'day'\nstart = '19:00'\nend = '07:00'\n"
            "patients_per_nurse = 7\nroster = [1,1,1,1,1,1,1]\n",
            "staffing.shift: shift names must differ ('day' is used more than once)",
        ),
        ("horizon_weeks = \n", "not valid TOML"),
    ],
)
def test_bad_scenarios_name_the_key(tmp_path, text, message):
    path = scenario(tmp_path, text)
    with pytest.raises(PlannerError) as error:
        load_scenario(path)
    assert message in str(error.value)
    assert str(path) in str(error.value)
    assert "\n" not in str(error.value)


def test_history_and_stays_needed(tmp_path):
    path = tmp_path / "empty.toml"
    path.write_text("paths = 10\n")
    with pytest.raises(PlannerError, match="give history.episodes or history.admissions"):
        load_scenario(path)


def test_dates_and_hours_parsed(tmp_path):
    plan = load_scenario(
        scenario(
            tmp_path,
            "start = 2026-01-02\n[[staffing.shift]]\nname = 'long'\nstart = '08:30'\n"
            "end = '08:30'\npatients_per_nurse = 5\nroster = [4,4,4,4,4,3,3]\n",
        )
    )
    assert plan.start == date(2026, 1, 2)
    shift = plan.ward.staffing.shifts[0]
    assert (shift.start_hour, shift.length_hours, shift.roster[-1]) == (8.5, 24.0, 3)


def test_every_key_documented():
    text = document()
    for key in TOP:
        assert f"`{key.name}`" in text and key.doc
    for table in TABLES:
        assert table.name in text
        for key in table.keys:
            assert key.doc, f"{table.name}.{key.name} has no documentation"


def test_docs_file_is_current():
    docs = Path(__file__).resolve().parents[1] / "docs" / "scenario.md"
    assert docs.read_text() == document() + "\n", "regenerate: python -m planner.schema"


def test_copied_demo_runs_from_elsewhere(tmp_path):
    shutil.copytree(DEMO, tmp_path / "copy")
    assert load_scenario(tmp_path / "copy" / "baseline.toml").episodes_file.is_file()


def test_history_format_keys_are_read(tmp_path):
    path = tmp_path / "plan.toml"
    path.write_text(
        '[history]\nadmissions = "ward.csv"\ndate_format = "%d.%m.%Y"\n'
        'timestamp_format = "%d/%m/%Y %H:%M"\nfill_missing_days = true\n'
        "[stay]\nmean = 4.0\nsd = 3.0\n[beds]\nbase = 28\n" + ROTA
    )
    form = load_scenario(path).history_format
    assert (form.date_format, form.timestamp_format, form.fill_missing_days) == (
        "%d.%m.%Y",
        "%d/%m/%Y %H:%M",
        True,
    )
    assert load_scenario(scenario(tmp_path, "")).history_format == HistoryFormat()


@pytest.mark.parametrize(
    ("line", "message"),
    [
        ('date_format = "%d/%m"', "history.date_format: must be a strptime format"),
        ('date_format = "%Y-%m-%d %Q"', "history.date_format: must be a strptime format"),
        ("date_format = 31", "history.date_format: must be a strptime format"),
        ('fill_missing_days = "yes"', "history.fill_missing_days: must be true or false"),
    ],
)
def test_bad_history_format_keys(tmp_path, line, message):
    path = tmp_path / "plan.toml"
    path.write_text(f'[history]\nadmissions = "ward.csv"\n{line}\n[stay]\nmean = 4.0\nsd = 3.0\n')
    with pytest.raises(PlannerError, match=message):
        load_scenario(path)


def test_folder_or_data_file_given_as_scenario(tmp_path):
    with pytest.raises(PlannerError, match="is a folder, not a scenario file"):
        load_scenario(tmp_path)
    (tmp_path / "ward.csv").write_text("date,admissions\n2026-01-01,3\n")
    with pytest.raises(PlannerError, match=r"ward.csv: is a data file, not a scenario \(.toml\)"):
        load_scenario(tmp_path / "ward.csv")

"""The hindcast page's plain-language headline and readable tables, on hand-made scores."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from planner.report.hindcast_report import headline, hindcast_page
from planner.report.hindcast_tables import brier_lines
from planner.results import HindcastResult


def _result(model_pinball: float, coverage_80: float, p_value: float) -> HindcastResult:
    summary = pd.DataFrame(
        {
            "horizon_week": [0, 1],
            "days": [28, 14],
            "origins": [2, 2],
            **{f"model_coverage_{p}": [c, c] for p, c in ((50, 0.5), (80, coverage_80),
                                                          (95, 0.95))},
            **{f"naive_coverage_{p}": [c, c] for p, c in ((50, 0.4), (80, 0.7), (95, 0.9))},
            "model_pinball": [model_pinball] * 2,
            "naive_pinball": [2.0, 2.0],
            "pinball_skill": [1 - model_pinball / 2.0] * 2,
            "model_brier_over_beds": [0.0, 0.0],
            "naive_brier_over_beds": [0.01, 0.01],
            "model_brier_over_beds_minus_2": [0.1, 0.1],
            "naive_brier_over_beds_minus_2": [0.12, 0.12],
            "model_brier_over_beds_minus_4": [0.2, 0.2],
            "naive_brier_over_beds_minus_4": [0.15, 0.15],
        }
    )  # fmt: skip
    reliability = pd.DataFrame(
        {"threshold": ["over_beds_minus_2"], "bin_from": [0.1], "bin_to": [0.2], "days": [9],
         "mean_predicted": [0.15], "observed_frequency": [0.2]}
    )  # fmt: skip
    origins = pd.DatetimeIndex(["2026-01-05", "2026-01-19"])
    return HindcastResult(
        scenario_name="ward", scenario_key="k", origins=origins, horizon_days=14,
        last_day=pd.Timestamp("2026-02-01"), weeks=4, paths=50, seed=1, table=pd.DataFrame(),
        summary=summary, reliability=reliability,
        pit_counts=np.array([1, 0, 0, 0, 0, 0, 0, 0, 0, 3]), chi_square=20.0, p_value=p_value,
        notes=(),
    )  # fmt: skip


@pytest.mark.parametrize(
    ("model", "coverage", "p_value", "beat", "verdict"),
    [
        (1.5, 0.81, 0.30, "beat", "is acceptable"),
        (2.5, 0.81, 0.30, "did not beat", "is acceptable"),
        (1.5, 0.60, 0.30, "beat", "is not acceptable"),  # the 80% band held too few days
        (1.5, 0.81, 0.002, "beat", "is not acceptable"),  # the PIT test warns
    ],
)
def test_headline_says_in_words_what_the_scores_say(model, coverage, p_value, beat, verdict):
    text = headline(_result(model, coverage, p_value))
    assert f"Over the last 4 weeks (2 past start dates), the 80% census band of this setup " \
        f"held {coverage:.0%} of days" in text  # fmt: skip
    assert f"The model {beat} the simple baseline" in text
    assert f"Calibration {verdict}" in text
    # PIT counts 1 of 4 in the lowest tenth, 3 of 4 in the highest (worked by hand).
    assert "below the forecast's 10% line on 25%" in text and "above its 90% line on 75%" in text


def test_calibration_warning_leads_the_page_and_tables_read_plainly():
    page = hindcast_page(_result(1.5, 0.81, 0.002), {"coverage.png": b"", "pit.png": b""})
    first_table = page.index("<table")
    assert page.index("Calibration warning") < first_table
    assert page.index("The model beat") < first_table
    for raw in ("mean_predicted", "observed_frequency", "bin_from", "over_beds_minus_2<"):
        assert raw not in page
    assert "census above beds - 2" in page and "10% to 20%" in page
    quiet = hindcast_page(_result(1.5, 0.81, 0.3), {"coverage.png": b"", "pit.png": b""})
    assert "Calibration warning" not in quiet


def test_brier_lines_name_both_scores_and_the_lower():
    overall = _result(1.5, 0.81, 0.3).overall().copy()
    lines = brier_lines(overall)
    assert lines == [
        "Brier score, census above beds (0 is perfect, lower is better): model 0.0000, naive "
        "baseline 0.0100; the model's is lower.",
        "Brier score, census above beds - 2 (0 is perfect, lower is better): model 0.1000, "
        "naive baseline 0.1200; the model's is lower.",
        "Brier score, census above beds - 4 (0 is perfect, lower is better): model 0.2000, "
        "naive baseline 0.1500; the naive baseline's is lower.",
    ]
    # Scores that differ only past the fourth decimal are shown, and called, equal.
    overall["naive_brier_over_beds_minus_2"] = 0.10004
    assert "model 0.1000, naive baseline 0.1000; equal to 4 decimals." in brier_lines(overall)[1]


def test_page_shows_both_brier_scores():
    page = hindcast_page(_result(1.5, 0.81, 0.3), {"coverage.png": b"", "pit.png": b""})
    section = page[page.index("Brier score, model and naive baseline") :]
    assert "model 0.2000, naive baseline 0.1500; the naive baseline&#x27;s is lower." in section
    assert "naive Brier score, census above beds - 2 (0 to 1)" in page

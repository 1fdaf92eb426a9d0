"""Files and page of a hindcast.

Written into one folder:

* ``hindcast.csv``: one row per origin and scored day (columns in
  :mod:`planner.runs.hindcast`);
* ``hindcast_summary.csv``: per horizon week (0 = all): horizon_week, days, origins,
  model_coverage_50/80/95, model_pinball, naive_coverage_50/80/95, naive_pinball (patients),
  pinball_skill (1 - model / naive), and for each threshold over_beds, over_beds_minus_2 and
  over_beds_minus_4 the Brier scores model_brier_<threshold> and naive_brier_<threshold> and
  brier_skill_<threshold> (1 - model / naive);
* ``hindcast_reliability.csv``: threshold, bin_from, bin_to, days, mean_predicted,
  observed_frequency;
* ``hindcast.json``: the sidecar that ties the files to one setup: scenario name and key
  (:func:`planner.fingerprint.scenario_key`), origins, horizon, paths, seed, overall coverage,
  overall Brier scores (model and naive, per threshold), PIT chi-square; the run record
  fields (resolved scenario, input hashes, versions);
* ``pit.png``, ``coverage.png`` and the page ``hindcast.html``.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

from planner.report import charts, html
from planner.report.files import run_record, write_csv, write_json
from planner.report.hindcast_tables import (
    BRIER_NOTE,
    RELIABILITY_NOTE,
    SUMMARY_NOTE,
    THRESHOLDS,
    brier_facts,
    reliability_view,
    summary_view,
)
from planner.results import HINDCAST_SIDECAR, HindcastResult

#: The PIT p-value under which calibration is called not acceptable (the page says why).
PIT_WARNING = 0.01
#: The share of days the 80% band must hold for calibration to be called acceptable.
COVERAGE_80_RANGE = (0.70, 0.90)
#: Made in planner/report/charts.py's style: room for a two-line axis label under the PIT.
PIT_MARGINS = charts.Margins(bottom=0.95, right=0.3)


def pit_histogram(counts: np.ndarray) -> bytes:
    """PIT bin counts against the flat line of a calibrated forecast, with a band of two
    binomial standard errors (independent days; real days are dependent, so wider)."""
    plt = charts.plt
    figure, axes = plt.subplots(figsize=(8, 3.8))
    bins = len(counts)
    total = counts.sum()
    expected = total / bins
    spread = 2 * np.sqrt(total * (1 / bins) * (1 - 1 / bins))
    axes.bar((np.arange(bins) + 0.5) / bins, counts, width=0.9 / bins, color=charts.BAND)
    axes.axhline(expected, color="black", linewidth=1, label="calibrated: equal counts")
    axes.axhspan(expected - spread, expected + spread, color=charts.GREY, alpha=0.15,
                 label="calibrated ± 2 binomial SE")  # fmt: skip
    axes.set_xlim(0, 1)
    axes.set_xlabel(
        "where the recorded census fell among the forecast paths (randomised PIT:\n"
        "0 = below every path, 1 = above every path)"
    )
    axes.set_ylabel("origin-weeks (count)")
    charts.whole_numbers(axes.yaxis)
    charts.title(axes, "Where the recorded census fell in the forecast")
    axes.legend(fontsize=8)
    return charts.png(figure, PIT_MARGINS)


def coverage_chart(summary: pd.DataFrame) -> bytes:
    """Coverage of the 50/80/95% census intervals by horizon week, model and naive."""
    plt = charts.plt
    figure, axes = plt.subplots(figsize=(8, 3.8))
    weeks = summary[summary["horizon_week"] > 0]
    for percent, style in ((50, ":"), (80, "-"), (95, "--")):
        axes.axhline(percent / 100, color="black", linewidth=0.6, linestyle=style)
        for who, marker, colour in (("model", "o", charts.LINE), ("naive", "s", charts.GREY)):
            axes.plot(
                weeks["horizon_week"],
                weeks[f"{who}_coverage_{percent}"],
                style,
                marker=marker,
                color=colour,
                markersize=3,
                label=f"{who} {percent}%",
            )
    axes.set_ylim(0, 1.02)
    charts.percent_axis(axes)
    charts.whole_numbers(axes.xaxis)
    axes.set_xlabel("horizon week (weeks after the start date)")
    axes.set_ylabel("days inside the band (% of days)")
    charts.title(axes, "Census band coverage by horizon week (black lines: 50, 80, 95%)")
    axes.legend(fontsize=7, ncol=3, loc="lower left")
    axes.grid(alpha=0.3)
    return charts.png(figure, charts.LABEL)


def calibration_acceptable(result: HindcastResult) -> bool:
    """Acceptable here: the PIT test's p-value at least :data:`PIT_WARNING` and the 80% band
    holding a share of days inside :data:`COVERAGE_80_RANGE`."""
    low, high = COVERAGE_80_RANGE
    coverage = result.overall()["model_coverage_80"]
    return bool(result.p_value >= PIT_WARNING and low <= coverage <= high)


def _tails(result: HindcastResult) -> str:
    """Where the recorded census fell in the outer tenths of the forecast."""
    counts = np.asarray(result.pit_counts, dtype=float)
    total = counts.sum()
    if total == 0:
        return ""
    below, above = counts[0] / total, counts[-1] / total
    return (
        f" The recorded census fell below the forecast's 10% line on {below:.0%} of the sampled "
        f"days and above its 90% line on {above:.0%} (about 10% each when calibrated)."
    )


def headline(result: HindcastResult) -> str:
    """The plain-language headline: how often the 80% band held, whether the model beat the
    simple baseline, and whether calibration is acceptable."""
    overall = result.overall()
    model, naive = overall["model_pinball"], overall["naive_pinball"]
    beat = "beat" if model < naive else "did not beat"
    low, high = COVERAGE_80_RANGE
    verdict = "is acceptable" if calibration_acceptable(result) else "is not acceptable"
    return (
        f"Over the last {result.weeks} weeks ({len(result.origins)} past start dates), the 80% "
        f"census band of this setup held {overall['model_coverage_80']:.0%} of days (a "
        f"calibrated band holds about 80%; the simple baseline's held "
        f"{overall['naive_coverage_80']:.0%}). The model {beat} the simple baseline, the "
        f"census at the start carried forward: mean pinball loss {model:.2f} patients against "
        f"{naive:.2f} (lower is better). Calibration {verdict} (here: the 80% band holding "
        f"{low:.0%}-{high:.0%} of days and the PIT test's p-value at least {PIT_WARNING:g}; "
        f"p = {result.p_value:.3f})." + _tails(result)
    )


def _sidecar(result: HindcastResult, scenario) -> dict:
    overall = result.overall()
    inputs = [p for p in (scenario.admissions_file, scenario.episodes_file) if p]
    extra = {
        "scenario_name": result.scenario_name,
        "scenario_key": result.scenario_key,
        "origins": [o.date() for o in result.origins],
        "horizon_days": result.horizon_days,
        "weeks": result.weeks,
        "coverage": {str(p): float(overall[f"model_coverage_{p}"]) for p in (50, 80, 95)},
        "naive_coverage": {str(p): float(overall[f"naive_coverage_{p}"]) for p in (50, 80, 95)},
        "brier": {
            name: {who: float(overall[f"{who}_brier_{name}"]) for who in ("model", "naive")}
            for name in THRESHOLDS
        },
        "pit_chi_square": result.chi_square,
        "pit_p_value": result.p_value,
        "notes": list(result.notes),
    }
    return run_record(
        "hindcast", scenario.source, scenario.resolved, inputs, result.seed, result.paths, extra
    )


def write_hindcast_files(result, scenario, folder: Path) -> None:
    """All hindcast files into ``folder`` (created if needed)."""
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    write_csv(result.table, folder / "hindcast.csv")
    write_csv(result.summary, folder / "hindcast_summary.csv")
    write_csv(result.reliability, folder / "hindcast_reliability.csv")
    pictures = {
        "pit.png": pit_histogram(result.pit_counts),
        "coverage.png": coverage_chart(result.summary),
    }
    for name, png in pictures.items():
        (folder / name).write_bytes(png)
    (folder / "hindcast.html").write_text(hindcast_page(result, pictures))
    write_json(_sidecar(result, scenario), folder / HINDCAST_SIDECAR)


def hindcast_page(result, pictures: dict[str, bytes]) -> str:
    """The self-contained hindcast page."""
    subtitle = (
        f"{len(result.origins)} origins from {result.origins[0].date()} to "
        f"{result.origins[-1].date()}, horizon {result.horizon_days} days, {result.paths} "
        f"paths per origin, seed {result.seed}."
    )
    method = [
        (
            "Data at each origin",
            "Admissions before it, stays as known then (stays still "
            "running censored at the origin, Kaplan-Meier / censored likelihood), the patients on "
            "the ward at the origin with their elapsed stays.",
        ),
        (
            "Recorded census",
            "Patients on the ward at 24:00, rebuilt from all episode records; "
            "days past the end of the history are not scored.",
        ),
        (
            "Naive baseline",
            "The census at the origin carried forward; its quantiles from the "
            "h-day census changes in the history before the origin.",
        ),
        (
            "PIT and its test",
            f"Randomised PIT, one day per origin-week (day 4); chi-square on "
            f"10 bins = {result.chi_square:.1f}, p = {result.p_value:.3f}. Nearby weeks and "
            f"overlapping origins are still correlated, so the p-value is too small: read "
            f"p < 0.01 as a warning, not a verdict.",
        ),
        *(("Note", note) for note in result.notes),
    ]
    warning = (
        ""
        if result.p_value >= PIT_WARNING
        else f'<p class="headline"><strong>Calibration warning:</strong> the PIT test gives p = '
        f"{result.p_value:.3f}, under {PIT_WARNING:g}: the recorded census did not fall evenly "
        f"across the forecast's range. Nearby weeks are correlated, so read it as a warning, "
        f"not a verdict (Method, below).</p>"
    )
    sections = [
        ("", f'<p class="headline">{html.escape(headline(result))}</p>' + warning),
        ("By horizon week", html.table(summary_view(result.summary)) + SUMMARY_NOTE),
        ("Coverage", html.image(pictures["coverage.png"], "coverage by horizon week")),
        ("Calibration (PIT)", html.image(pictures["pit.png"], "PIT histogram")),
        (
            "Bed thresholds: Brier score, model and naive baseline",
            html.facts(brier_facts(result.overall())) + BRIER_NOTE,
        ),
        (
            "Bed thresholds: reliability",
            html.table(reliability_view(result.reliability)) + RELIABILITY_NOTE,
        ),
        ("Method", html.facts(method)),
    ]
    return html.page(f"Hindcast: {result.scenario_name}", sections, subtitle)

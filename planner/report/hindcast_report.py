"""Files and page of a hindcast.

Written into one folder:

* ``hindcast.csv``: one row per origin and scored day (columns in
  :mod:`planner.runs.hindcast`);
* ``hindcast_summary.csv``: per horizon week (0 = all): horizon_week, days, origins,
  model_coverage_50/80/95, model_pinball, naive_coverage_50/80/95, naive_pinball (patients),
  pinball_skill (1 - model / naive), brier_over_beds, brier_over_beds_minus_2,
  brier_over_beds_minus_4;
* ``hindcast_reliability.csv``: threshold, bin_from, bin_to, days, mean_predicted,
  observed_frequency;
* ``hindcast.json``: the sidecar that ties the files to one setup: scenario name and key
  (:func:`planner.fingerprint.scenario_key`), origins, horizon, paths, seed, overall coverage,
  PIT chi-square; the run record fields (resolved scenario, input hashes, versions);
* ``pit.png``, ``coverage.png`` and the page ``hindcast.html``.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

from planner.report import charts, html
from planner.report.files import run_record, write_csv, write_json
from planner.results import HINDCAST_SIDECAR, HindcastResult


def pit_histogram(counts: np.ndarray) -> bytes:
    """PIT bin counts against the flat line of a calibrated forecast, with a band of two
    binomial standard errors (independent days; real days are dependent, so wider)."""
    plt = charts.plt
    figure, axes = plt.subplots(figsize=(6, 3.5))
    bins = len(counts)
    total = counts.sum()
    expected = total / bins
    spread = 2 * np.sqrt(total * (1 / bins) * (1 - 1 / bins))
    axes.bar((np.arange(bins) + 0.5) / bins, counts, width=0.9 / bins, color=charts.BAND)
    axes.axhline(expected, color="black", linewidth=1, label="calibrated")
    axes.axhspan(expected - spread, expected + spread, color=charts.GREY, alpha=0.15)
    axes.set_xlim(0, 1)
    axes.set_xlabel("randomised PIT of the recorded census")
    axes.set_ylabel("origin-weeks")
    charts.title(axes, "Where the recorded census fell in the forecast")
    axes.legend(fontsize=8)
    return charts.png(figure, charts.LABEL)


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
    axes.set_xlabel("horizon week")
    axes.set_ylabel("share of days inside the interval")
    charts.title(axes, "Census interval coverage (black: nominal)")
    axes.legend(fontsize=7, ncol=3, loc="lower left")
    axes.grid(alpha=0.3)
    return charts.png(figure, charts.LABEL)


def headline(result: HindcastResult) -> str:
    """One sentence on the 80% band over all origins."""
    overall = result.overall()
    return (
        f"Over the last {result.weeks} weeks ({len(result.origins)} past start dates), the 80% "
        f"census band of this setup held {overall['model_coverage_80']:.0%} of days (naive "
        f"baseline: {overall['naive_coverage_80']:.0%}); pinball loss "
        f"{overall['model_pinball']:.2f} patients against {overall['naive_pinball']:.2f}."
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
    reliability = result.reliability[
        ["threshold", "bin_from", "bin_to", "days", "mean_predicted", "observed_frequency"]
    ]
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
    sections = [
        ("", f'<p class="headline">{html.escape(headline(result))}</p>'),
        ("By horizon week", html.table(summary_view(result.summary)) + SUMMARY_NOTE),
        ("Coverage", html.image(pictures["coverage.png"], "coverage by horizon week")),
        ("Calibration (PIT)", html.image(pictures["pit.png"], "PIT histogram")),
        (
            "Bed thresholds: reliability",
            html.table(
                reliability,
                {
                    "mean_predicted": ".2f",
                    "observed_frequency": ".2f",
                    "bin_from": ".1f",
                    "bin_to": ".1f",
                },
            ),
        ),
        ("Method", html.facts(method)),
    ]
    return html.page(f"Hindcast: {result.scenario_name}", sections, subtitle)


SUMMARY_NOTE = (
    "<p>Coverage: share of days on which the recorded census fell inside the central 50%, "
    "80% and 95% bands, for this setup and for the naive baseline (census at the start "
    "carried forward). Pinball loss in patients, lower is better; skill = 1 - model / naive. "
    "Brier score of P(census above beds - 2). All columns are in hindcast_summary.csv.</p>"
)


def summary_view(summary: pd.DataFrame) -> pd.DataFrame:
    """The summary with readable headers, coverages side by side."""

    def bands(prefix: str) -> pd.Series:
        parts = [summary[f"{prefix}_coverage_{p}"].map("{:.0%}".format) for p in (50, 80, 95)]
        return parts[0] + " / " + parts[1] + " / " + parts[2]

    return pd.DataFrame(
        {
            "horizon week": summary["horizon_week"].map(lambda w: "all" if w == 0 else str(w)),
            "days scored": summary["days"],
            "start dates": summary["origins"],
            "coverage 50 / 80 / 95%": bands("model"),
            "naive coverage": bands("naive"),
            "pinball": summary["model_pinball"].map("{:.2f}".format),
            "naive pinball": summary["naive_pinball"].map("{:.2f}".format),
            "skill": summary["pinball_skill"].map("{:.0%}".format),
            "Brier, beds - 2": summary["brier_over_beds_minus_2"].map("{:.3f}".format),
        }
    )

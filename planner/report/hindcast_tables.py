"""The hindcast's scores in words and readable tables: the Brier score of each bed threshold,
the model's beside the naive baseline's with which is lower (terminal and page), the summary
by horizon week and the reliability table."""

from __future__ import annotations

import math

import pandas as pd

#: The thresholds (column suffixes of hindcast_summary.csv and hindcast_reliability.csv) in
#: words, in the order they are shown.
THRESHOLDS = {
    "over_beds": "census above beds",
    "over_beds_minus_2": "census above beds - 2",
    "over_beds_minus_4": "census above beds - 4",
}
#: Decimals a Brier score is shown with; scores equal when rounded to them are called equal.
BRIER_DECIMALS = 4


def lower_brier(model: float, naive: float) -> str:
    """Which of the two Brier scores is lower, in words."""
    if math.isnan(model) or math.isnan(naive):
        return "no days scored"
    if round(model, BRIER_DECIMALS) == round(naive, BRIER_DECIMALS):
        return f"equal to {BRIER_DECIMALS} decimals"
    return "the model's is lower" if model < naive else "the naive baseline's is lower"


def brier_facts(overall: pd.Series) -> list[tuple[str, str]]:
    """Per threshold (in words): the model's and the naive baseline's Brier score over all
    scored days (``overall``: the summary row of horizon week 0) and which is lower."""
    facts = []
    for name, words in THRESHOLDS.items():
        model, naive = overall[f"model_brier_{name}"], overall[f"naive_brier_{name}"]
        facts.append((
            words,
            f"model {model:.{BRIER_DECIMALS}f}, naive baseline {naive:.{BRIER_DECIMALS}f}; "
            f"{lower_brier(model, naive)}.",
        ))  # fmt: skip
    return facts


def brier_lines(overall: pd.Series) -> list[str]:
    """The terminal's lines of :func:`brier_facts`, one per threshold."""
    return [
        f"Brier score, {words} (0 is perfect, lower is better): {text}"
        for words, text in brier_facts(overall)
    ]


BRIER_NOTE = (
    "<p>Brier score: the mean over the scored days of (predicted chance - outcome)², the "
    "outcome 1 on a day the recorded census was above the threshold and 0 otherwise; 0 is "
    "perfect, lower is better. The naive baseline's chance is the share of the past census "
    "changes over the same number of days that would take the census at the start above the "
    "threshold. The simulated census counts occupied beds and cannot exceed the beds open, so "
    "the model's chance of a census above beds is 0 on every day. Brier skill (1 - model / "
    "naive) is in hindcast_summary.csv.</p>"
)

SUMMARY_NOTE = (
    "<p>Coverage: share of days on which the recorded census fell inside the central 50%, "
    "80% and 95% bands, for this setup and for the naive baseline (census at the start "
    "carried forward). Pinball loss in patients, averaged over days and quantile levels, lower "
    "is better; skill = 1 - model / naive. Brier score of the predicted chance that the census "
    "is above beds - 2, the model's and the naive baseline's (0 is perfect). All columns are "
    "in hindcast_summary.csv.</p>"
)

RELIABILITY_NOTE = (
    "<p>Days grouped by the model's predicted chance that the census is above a threshold; a "
    "reliable forecast has the observed share close to the mean predicted chance in every "
    "row. All columns are in hindcast_reliability.csv.</p>"
)


def summary_view(summary: pd.DataFrame) -> pd.DataFrame:
    """The summary with headers that say their unit, coverages side by side."""

    def bands(prefix: str) -> pd.Series:
        parts = [summary[f"{prefix}_coverage_{p}"].map("{:.0%}".format) for p in (50, 80, 95)]
        return parts[0] + " / " + parts[1] + " / " + parts[2]

    brier = "{:." + str(BRIER_DECIMALS) + "f}"
    return pd.DataFrame(
        {
            "horizon week": summary["horizon_week"].map(lambda w: "all" if w == 0 else str(w)),
            "days scored (count)": summary["days"],
            "start dates (count)": summary["origins"],
            "inside the 50 / 80 / 95% bands (% of days)": bands("model"),
            "naive baseline inside the bands (% of days)": bands("naive"),
            "pinball loss (patients per day)": summary["model_pinball"].map("{:.2f}".format),
            "naive pinball loss (patients per day)": summary["naive_pinball"].map("{:.2f}".format),
            "skill (% lower loss than naive)": summary["pinball_skill"].map("{:.0%}".format),
            "Brier score, census above beds - 2 (0 to 1)": summary[
                "model_brier_over_beds_minus_2"
            ].map(brier.format),
            "naive Brier score, census above beds - 2 (0 to 1)": summary[
                "naive_brier_over_beds_minus_2"
            ].map(brier.format),
        }
    )


def reliability_view(reliability: pd.DataFrame) -> pd.DataFrame:
    """hindcast_reliability.csv with readable headers."""
    return pd.DataFrame(
        {
            "threshold": reliability["threshold"].map(lambda t: THRESHOLDS.get(t, t)),
            "predicted chance (% range)": reliability["bin_from"].map("{:.0%}".format)
            + " to "
            + reliability["bin_to"].map("{:.0%}".format),
            "days (count)": reliability["days"],
            "mean predicted chance (%)": reliability["mean_predicted"].map("{:.1%}".format),
            "observed share of days (%)": reliability["observed_frequency"].map("{:.1%}".format),
        }
    )

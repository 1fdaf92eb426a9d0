"""The hospital page's chart: week by week, the chance that some patient finds no bed
anywhere, for the hospital and for each ward's own patients."""

from __future__ import annotations

import matplotlib.pyplot as plt
import numpy as np

from planner.report.charts import (
    ERROR_BARS,
    LINE,
    TWO_LINES_AND_LABEL,
    percent_axis,
    png,
    title,
    week_ticks,
)
from planner.results import HospitalRun


def no_bed_by_week(run: HospitalRun) -> bytes:
    """Lines per ward (its patients finding no bed on the home ward nor a ward of its
    outlying list) and a heavier line for the whole hospital, with 95% error bars."""
    figure, axes = plt.subplots(figsize=(10, 4))
    table = run.table
    weeks = np.arange(1, len(table) + 1)
    for name, ward in zip(run.scenario.names, run.wards, strict=True):
        weekly = ward.summary.weekly
        axes.errorbar(weeks, weekly["p_bed_shortfall"], yerr=1.96 * weekly["p_bed_shortfall_se"],
                      marker="o", markersize=3, linewidth=1, capsize=2, alpha=0.8,
                      label=f"{name}'s patients")  # fmt: skip
    axes.errorbar(weeks, table["p_no_bed_anywhere"], yerr=1.96 * table["p_no_bed_anywhere_se"],
                  color=LINE, marker="s", markersize=4, linewidth=2.5, capsize=2,
                  label="any patient of the hospital")  # fmt: skip
    axes.errorbar([], [], yerr=[], color="black", capsize=2, linestyle="", label=ERROR_BARS)
    week_ticks(axes, table["week_start"], weeks)
    axes.set_ylim(0, max(0.05, float(table["p_no_bed_anywhere"].max()) * 1.3))
    percent_axis(axes)
    axes.set_xlabel("forecast week: number and first day")
    axes.set_ylabel("chance in the week (% of paths)")
    title(axes, "Chance that some patient finds no bed on the home ward or a ward it may go to")
    axes.legend(loc="upper left", fontsize=8, ncol=3)
    axes.grid(axis="y", alpha=0.3)
    return png(figure, TWO_LINES_AND_LABEL)

"""Charts of plans: a comparison's weekly chances by plan, and a sizing's risk against beds.
Layout, colours and helpers are those of :mod:`planner.report.charts`; each function returns PNG
bytes."""

from __future__ import annotations

import numpy as np
import pandas as pd

from planner.report import charts

#: Colours of the plans of a comparison, in turn: blues and greys only.
PLAN_COLOURS = (charts.LINE, charts.GREY, "#6f9fd8", "#a0a0a0", "#0b1f3a", "#2b2b2b")
PLAN_MARKERS = ("o", "s", "^", "D", "v", "x")


def comparison_chart(comparison: pd.DataFrame) -> bytes:
    """By week and scenario: the probability of a bed shortfall and of a shift short of
    nurses, with 95% error bars (1.96 standard errors); weeks by number and first day."""
    figure, panels = charts.plt.subplots(1, 2, figsize=(12, 4.2), sharey=True)
    measures = (
        ("p_bed_shortfall", "no free bed at some moment"),
        ("p_staff_shortfall", "at least one shift short of nurses"),
    )
    for axes, (column, event) in zip(panels, measures, strict=True):
        for number, (name, rows) in enumerate(comparison.groupby("scenario", sort=False)):
            weeks = np.arange(1, len(rows) + 1) + 0.08 * number
            axes.errorbar(
                weeks,
                rows[column],
                yerr=1.96 * rows[f"{column}_se"],
                color=PLAN_COLOURS[number % len(PLAN_COLOURS)],
                marker=PLAN_MARKERS[number % len(PLAN_MARKERS)],
                markersize=3,
                capsize=2,
                label=name,
            )
        first = comparison[comparison["scenario"] == comparison["scenario"].iloc[0]]
        charts.week_ticks(axes, first["week_start"], np.arange(1, len(first) + 1), most=7)
        axes.set_ylim(0, 1)
        charts.percent_axis(axes)
        axes.set_xlabel("forecast week: number and first day")
        charts.title(axes, f"Chance of {event}, by week", fontsize=10)
        axes.grid(alpha=0.3)
    panels[0].set_ylabel("chance in the week (% of paths)")
    panels[0].errorbar(
        [], [], yerr=[], color="black", capsize=2, linestyle="", label=charts.ERROR_BARS
    )
    panels[0].legend(fontsize=8, loc="upper left")
    return charts.png(figure, charts.SIDE_BY_SIDE_DATES)


def risk_against_beds(candidates: pd.DataFrame, target: float, marks: dict[str, int], label: str):
    """The worst week's risk (column ``risk`` of the candidates table, with 95% error bars of
    1.96 standard errors) against beds, the ``target`` as a dashed line, and each of ``marks``
    (name -> beds: the answer, the current beds, the classical sizes) as a labelled line."""
    worst = candidates.loc[candidates.groupby("beds")["risk"].idxmax()]
    figure, axes = charts.plt.subplots(figsize=(10, 4))
    axes.errorbar(worst["beds"], worst["risk"], yerr=1.96 * worst["risk_se"], color=charts.LINE,
                  marker="o", markersize=3, capsize=2,
                  label=f"worst week, simulated ({charts.ERROR_BARS})")  # fmt: skip
    axes.axhline(target, color="black", linestyle="--", linewidth=1, label="target")
    top = float(max(worst["risk"].max(), target)) * 1.05
    styles = (":", "-.", "--", "-")
    for number, (name, beds) in enumerate(marks.items()):
        axes.axvline(beds, color=charts.GREY, linestyle=styles[number % 4], linewidth=1)
        axes.text(beds, top * (0.95 - 0.07 * number), f" {name}: {beds}", fontsize=8)
    axes.set_ylim(0, top)
    axes.set_xlabel("base beds open")
    charts.whole_numbers(axes.xaxis)
    axes.set_ylabel(label)
    charts.title(axes, "Risk against beds, same simulated patients for every count")
    axes.legend(loc="center right", fontsize=8)
    axes.grid(alpha=0.3)
    return charts.png(figure, charts.LABEL)

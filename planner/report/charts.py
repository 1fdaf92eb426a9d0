"""Charts (PNG) for the reports. Each function takes tables and returns PNG bytes.

Colours are plain blues and greys: the charts show probabilities and counts, not status
codes. Fan charts shade the 50%, 80% and 90% central bands of the sample paths.

Layout: each kind of chart has fixed margins in inches (:class:`Margins`), room for its tick
labels, axis labels, title and a legend below, chosen once. Measuring every text of every chart
(``tight_layout``) drew each chart twice and took about a third of the charts' time.
"""

from __future__ import annotations

import io
from dataclasses import dataclass

import matplotlib

matplotlib.use("Agg")

import matplotlib.dates as mdates  # noqa: E402
import matplotlib.pyplot as plt  # noqa: E402
import matplotlib.ticker as mticker  # noqa: E402
import numpy as np  # noqa: E402
import pandas as pd  # noqa: E402

BAND = "#3b6ea8"
LINE = "#1f3d63"
GREY = "#555555"
BANDS = (("05", "95", 0.18), ("10", "90", 0.28), ("25", "75", 0.45))
DPI = 110


@dataclass(frozen=True)
class Margins:
    """Space around the plotting area, inches: ``left`` for the y tick labels (up to four
    digits) and the y axis label, ``right`` for half of a date tick label at the last tick,
    ``top`` for the title, ``bottom`` for the x tick labels (two lines for dates) and what is
    below them; ``hspace`` and ``wspace`` between panels, as fractions of a panel's height and
    width."""

    bottom: float
    left: float = 0.8
    right: float = 0.35
    top: float = 0.4
    hspace: float = 0.1
    wspace: float = 0.04


#: Two-line date ticks, an axis label and a legend of up to two rows under them.
DATES_AND_LEGEND = Margins(bottom=1.45)
#: Two-line date ticks.
DATES = Margins(bottom=0.6)
#: Two-line tick labels and an axis label.
TWO_LINES_AND_LABEL = Margins(bottom=0.85, right=0.25)
#: One-line tick labels and an axis label.
LABEL = Margins(bottom=0.6, right=0.3)
#: Two panels side by side, each with one-line tick labels and axis labels.
SIDE_BY_SIDE = Margins(bottom=0.6, right=0.3, wspace=0.3)
#: Two panels side by side, each with two-line date ticks and an axis label.
SIDE_BY_SIDE_DATES = Margins(bottom=0.85, right=0.3, wspace=0.08)
#: Stacked panels with two-line date ticks and an axis label under the last.
DATES_AND_LABEL = Margins(bottom=0.85)

#: The legend's words for error bars, which are 95% intervals throughout.
ERROR_BARS = "bars: 95% interval (±1.96 SE)"


def whole_numbers(axis) -> None:
    """Ticks on whole numbers only (counts of nurses, beds, patients)."""
    axis.set_major_locator(mticker.MaxNLocator(integer=True))


def percent_axis(axes: plt.Axes) -> None:
    """A y axis of shares (0-1) labelled in percent."""
    axes.yaxis.set_major_formatter(mticker.PercentFormatter(1.0, decimals=0))


def week_ticks(axes: plt.Axes, week_start, positions, most: int = 14) -> None:
    """Week axis ticks: the week's number and its first day ("3\n14 Dec"), at most ``most``
    of them."""
    labels = [
        f"{number}\n{pd.Timestamp(start):%d %b}" for number, start in enumerate(week_start, start=1)
    ]
    step = -(-len(labels) // most)
    axes.set_xticks(positions[::step], labels[::step])


def title(axes: plt.Axes, text: str, **style) -> None:
    """The axes' title, at a fixed height just above it: left to itself, matplotlib measures
    every tick label of the axes at each drawing to see whether the title must move up."""
    axes.set_title(text, y=1.0, **style)


def png(figure: plt.Figure, margins: Margins) -> bytes:
    """The chart as PNG bytes, laid out with ``margins``; the figure is closed."""
    width, height = figure.get_size_inches()
    figure.subplots_adjust(
        left=margins.left / width,
        right=1 - margins.right / width,
        bottom=margins.bottom / height,
        top=1 - margins.top / height,
        hspace=margins.hspace,
        wspace=margins.wspace,
    )
    buffer = io.BytesIO()
    figure.savefig(buffer, format="png", dpi=DPI)
    plt.close(figure)
    return buffer.getvalue()


def _date_axis(axes: plt.Axes, label: str = "date") -> None:
    axes.xaxis.set_major_locator(mdates.AutoDateLocator(maxticks=10))
    axes.xaxis.set_major_formatter(mdates.DateFormatter("%d %b\n%Y"))
    axes.set_xlabel(label, fontsize=9)
    axes.grid(alpha=0.3)


def _legend_below(axes: plt.Axes) -> None:
    """Legend in one row under the plot and its axis label, clear of the data."""
    axes.legend(loc="upper center", bbox_to_anchor=(0.5, -0.3), fontsize=8, ncol=5, frameon=False)


def _fan(axes: plt.Axes, dates, table: pd.DataFrame, prefix: str, label: str) -> None:
    for low, high, alpha in BANDS:
        axes.fill_between(
            dates,
            table[f"{prefix}{low}"],
            table[f"{prefix}{high}"],
            color=BAND,
            alpha=alpha,
            linewidth=0,
            label=f"{int(high) - int(low)}% of paths",
        )
    axes.plot(dates, table[f"{prefix}50"], color=LINE, linewidth=1.5, label=label)


def admissions_fan(history: pd.Series, forecast: pd.DataFrame, weeks_of_history: int = 8) -> bytes:
    """Recent daily admissions and the forecast bands (forecast.csv columns q05..q95)."""
    figure, axes = plt.subplots(figsize=(10, 4))
    recent = history.iloc[-7 * weeks_of_history :]
    axes.plot(recent.index, recent.to_numpy(), color=GREY, linewidth=1, label="admissions")
    dates = pd.to_datetime(forecast["date"])
    _fan(axes, dates, forecast, "q", "forecast median")
    axes.plot(dates, forecast["mean"], color=LINE, linewidth=1, linestyle="--", label="mean")
    axes.set_ylabel("emergency admissions per day")
    whole_numbers(axes.yaxis)
    title(axes, "Admissions: recent history and forecast")
    _legend_below(axes)
    _date_axis(axes)
    return png(figure, DATES_AND_LEGEND)


def census_fan(daily: pd.DataFrame, recorded: pd.Series | None = None) -> bytes:
    """Occupied beds against beds open (daily.csv columns): the bands of the midnight census
    across paths, the median and 90% quantile of each day's highest occupancy (the moment
    when patients start to wait), after the ``recorded`` midnight census of recent weeks."""
    figure, axes = plt.subplots(figsize=(10, 4))
    if recorded is not None and len(recorded):
        axes.plot(
            recorded.index, recorded.to_numpy(), color=GREY, linewidth=1, label="recorded census"
        )
    dates = pd.to_datetime(daily["date"])
    _fan(axes, dates, daily, "census_p", "median midnight census")
    axes.plot(dates, daily["peak_occupancy_p50"], color=LINE, linewidth=1, linestyle=":",
              label="day's highest, median")  # fmt: skip
    axes.plot(dates, daily["peak_occupancy_p90"], color=LINE, linewidth=1, linestyle="--",
              label="day's highest, 90% of paths")  # fmt: skip
    axes.step(
        dates, daily["beds_open"], where="mid", color="black", linewidth=1.5, label="beds open"
    )
    axes.set_ylabel("occupied beds (patients)")
    whole_numbers(axes.yaxis)
    title(axes, "Occupied beds against beds open: at midnight (bands) and at the day's peak")
    _date_axis(axes)
    _legend_below(axes)
    return png(figure, DATES_AND_LEGEND)


def shortfall_probabilities(weekly: pd.DataFrame) -> bytes:
    """Weekly probabilities of a bed and of a nurse shortfall, with 95% Monte Carlo error
    bars (1.96 standard errors)."""
    figure, axes = plt.subplots(figsize=(10, 4))
    weeks = np.arange(1, len(weekly) + 1)
    width = 0.4
    for offset, column, label, colour in (
        (-width / 2, "p_bed_shortfall", "no free bed at some moment", BAND),
        (width / 2, "p_staff_shortfall", "at least one shift short of nurses", GREY),
    ):
        axes.bar(
            weeks + offset,
            weekly[column],
            width,
            yerr=1.96 * weekly[f"{column}_se"],
            color=colour,
            alpha=0.8,
            capsize=2,
            label=label,
        )
    axes.errorbar([], [], yerr=[], color="black", capsize=2, linestyle="", label=ERROR_BARS)
    week_ticks(axes, weekly["week_start"], weeks)
    axes.set_ylim(0, 1)
    percent_axis(axes)
    axes.set_xlabel("forecast week: number and first day")
    axes.set_ylabel("chance in the week (% of paths)")
    title(axes, "Chance of running short, by week")
    axes.legend(loc="upper left", fontsize=8, ncol=3)
    axes.grid(axis="y", alpha=0.3)
    return png(figure, TWO_LINES_AND_LABEL)


def nurses_against_roster(shifts: pd.DataFrame) -> bytes:
    """Per shift: nurses required (median and 90% quantile across paths) against rostered.
    The 90% quantile is drawn as a wide pale line over the band, so it shows where it equals
    the median."""
    names = list(dict.fromkeys(shifts["shift"]))
    figure, panels = plt.subplots(
        len(names), 1, figsize=(10, 2.6 * len(names) + 0.4), sharex=True, squeeze=False
    )
    for axes, name in zip(panels[:, 0], names, strict=True):
        rows = shifts[shifts["shift"] == name]
        dates = pd.to_datetime(rows["date"])
        axes.fill_between(
            dates,
            rows["nurses_required_p50"],
            rows["nurses_required_p90"],
            color=BAND,
            alpha=0.3,
            step="mid",
        )
        axes.step(dates, rows["nurses_required_p90"], where="mid", color=BAND, alpha=0.45,
                  linewidth=5, label="required in 90% of paths")  # fmt: skip
        axes.step(dates, rows["nurses_required_p50"], where="mid", color=LINE, linewidth=1,
                  label="required, median")  # fmt: skip
        axes.step(
            dates,
            rows["nurses_rostered"],
            where="mid",
            color="black",
            linewidth=1.5,
            linestyle="--",
            label="rostered",
        )
        axes.set_ylabel(f"{name} shift:\nregistered nurses", fontsize=9)
        whole_numbers(axes.yaxis)
        low = min(rows["nurses_required_p50"].min(), rows["nurses_rostered"].min())
        high = max(rows["nurses_required_p90"].max(), rows["nurses_rostered"].max())
        axes.set_ylim(max(low - 1, 0), high + 1)
        axes.legend(loc="upper left", fontsize=8, ncol=3)
        axes.grid(alpha=0.3)
    _date_axis(panels[-1, 0], "date (the day the shift starts)")
    title(panels[0, 0], "Registered nurses required (per shift) against rostered")
    return png(figure, DATES_AND_LABEL)


def discharge_pattern(daily: pd.DataFrame, hour_profile: np.ndarray | None) -> bytes:
    """Mean simulated discharges by weekday (daily.csv's ``expected_discharges``) and, with
    calendar discharge timing (``hour_profile``: (7, 24) shares by weekday), the share of
    discharges by hour on weekdays and at weekends."""
    panels = 1 if hour_profile is None else 2
    figure, axes = plt.subplots(1, panels, figsize=(10, 3.6), squeeze=False)
    weekday = pd.to_datetime(daily["date"]).dt.day_of_week
    by_weekday = daily["expected_discharges"].groupby(weekday).mean().reindex(range(7))
    names = ["Mon", "Tue", "Wed", "Thu", "Fri", "Sat", "Sun"]
    axes[0, 0].bar(names, by_weekday.to_numpy(), color=BAND, alpha=0.8)
    axes[0, 0].set_ylabel("discharges per day (mean over paths)")
    axes[0, 0].set_xlabel("weekday")
    title(axes[0, 0], "Simulated discharges by weekday")
    if hour_profile is not None:
        edges = np.arange(25)
        for rows, label, colour in ((slice(0, 5), "Monday-Friday", LINE),
                                    (slice(5, 7), "Saturday-Sunday", GREY)):  # fmt: skip
            share = hour_profile[rows].mean(axis=0)
            axes[0, 1].stairs(100 * share, edges, color=colour, label=label)
        axes[0, 1].set_xticks(range(0, 25, 3))
        axes[0, 1].set_xlabel("hour of the day (24-hour clock)")
        axes[0, 1].set_ylabel("% of the day's discharges")
        axes[0, 1].legend(loc="upper left", fontsize=8)
        title(axes[0, 1], "Discharges by hour")
    for panel in axes[0]:
        panel.grid(axis="y", alpha=0.3)
    return png(figure, SIDE_BY_SIDE)

"""Generate the invented demo export of Kestrel Vale District Hospital by simulating its wards.

The hospital, its wards and its patients are fictional; every value below is invented for the
demo. Three wards, each simulated minute by minute with its beds from 2 January 2023 (the
wards start empty) to 29 November 2026:

* Larch (General Medicine, 28 beds): emergency admissions only;
* Alder (General Surgery, 20 beds): emergency admissions, and a planned (elective) list each
  weekday: 4 patients booked for 07:30, each attending with probability 0.85, no list on
  public holidays; planned patients stay shorter;
* Rowan (Care of Older People, 24 beds): emergency admissions, longer stays.

Emergency demand per ward: a typical weekday's expected admissions, a weekday pattern
(Monday busiest, weekends about 0.78 of weekdays), an annual cycle peaking in mid-January, a
trend of 1.5% a year, a latent log-rate following an AR(1) process (coefficient 0.5, sd 0.08),
Poisson counts, and admission times from an hour-of-day profile (quiet overnight, busiest
from mid-afternoon to evening).

Beds. A patient who finds every bed taken waits, first come first served, and takes the
first bed freed; the records show the stay from the moment the patient took the bed (the
wait, in the emergency department, is not in the ward's records), so no ward's recorded
census ever exceeds its beds. A patient still waiting when the records end is in no ward's
records. The records end at 24:00 on the last day: discharges after it are NULL (still in).

Discharges follow the calendar and the clock. A patient who takes a bed on day A is on day of
stay k on day A + k and leaves that day with probability h given by logit h = logit h_k +
log(odds of the weekday): h_k the ward's (or the planned patients') hazard on a Monday, the
last value repeating, and odds 1 Monday to Thursday, 1.15 Friday, 0.55 Saturday and 0.50
Sunday. The clock time comes from one afternoon-heavy profile of discharge hours (even within
each hour); on the day the bed was taken it is drawn after the bed time (evenly over the rest
of the day if the profile holds nothing later). This is the process planner fits
(planner/simulate/discharge_fit.py), so the records agree with the model the tool fits.

Run from the project folder to rewrite the export and the truth (both are committed):

    python scenarios/generate_hospital.py

Writes ``data/kestrel_vale_stays.csv`` (day-first times, NULL for a patient still in),
``data/kestrel_vale_stays.xlsx`` (the same rows, sheet "Stays", times as date cells) and
``data/kestrel_vale_truth.csv``: per ward and day the patients who took a bed that day
(``admissions``) and the patients in beds at 24:00 (``census``), as the simulation counted
them.
"""

from __future__ import annotations

import heapq
import re
import zipfile
from collections import deque
from dataclasses import dataclass
from datetime import datetime
from pathlib import Path

import numpy as np
import pandas as pd

# planner learns where episode records end from the latest admission or discharge, so a ward
# with neither on the last day would look a day short: this seed gives every ward one.
SEED = 20261130
FIRST_DAY = "2023-01-02"
LAST_DAY = "2026-11-29"
WEEKDAY_FACTORS = np.array([1.12, 1.04, 1.01, 0.99, 0.98, 0.79, 0.77])  # Monday..Sunday
PEAK_DAY_OF_YEAR = 15
TREND_PER_YEAR = 0.015
NOISE_AR = 0.5
NOISE_SD = 0.08
# Share of emergency admissions by hour of day, 00:00..23:00 (normalised).
ADMISSION_HOURS = np.array(
    [2, 1.5, 1.2, 1, 1, 1, 1.2, 1.5, 2, 3, 4, 5, 6, 6.5, 7, 7, 7, 6.5, 6, 5.5, 5, 4, 3.5, 2.5]
)
# Share of discharges by hour of day, 00:00..23:00 (percent): afternoon-heavy.
DISCHARGE_PERCENT = [0, 0, 0, 0, 0, 0, 0, 0, 1, 2, 4, 6, 9, 12, 14, 14, 12, 10, 7, 5, 3, 1, 0, 0]
DISCHARGE_HOURS = np.array(DISCHARGE_PERCENT, dtype=float) / 100
# Odds of discharge on each weekday relative to Monday, Monday..Sunday.
DISCHARGE_ODDS = np.array([1.0, 1.0, 1.0, 1.0, 1.15, 0.55, 0.50])
# Planned lists: patients booked each weekday, the chance each attends, and the bed time.
BOOKED, ATTENDS, LIST_MINUTE = 4, 0.85, 7 * 60 + 30
# No planned list on these days.
HOLIDAYS = ["2023-12-25", "2023-12-26", "2024-01-01", "2024-12-25", "2024-12-26",
            "2025-01-01", "2025-12-25", "2025-12-26", "2026-01-01"]  # fmt: skip
MINUTES_PER_DAY = 1440

DATA = Path(__file__).resolve().parent / "data"
EXPORT = DATA / "kestrel_vale_stays.csv"
WORKBOOK = DATA / "kestrel_vale_stays.xlsx"
TRUTH = DATA / "kestrel_vale_truth.csv"
HEADER = ["Patient ID", "Ward", "Specialty", "Admission Method", "Admission Date",
          "Discharge Date"]  # fmt: skip
DAY_FIRST = "%d/%m/%Y %H:%M"


@dataclass(frozen=True)
class Ward:
    """One ward: ``level`` expected emergency admissions on a typical weekday, ``winter`` the
    relative amplitude of the annual cycle, ``hazard`` the Monday probability of discharge on
    days of stay 0, 1, ... (the last repeating) of emergency patients, ``planned_hazard`` the
    same for planned patients (None: no planned list)."""

    name: str
    specialty: str
    beds: int
    level: float
    winter: float
    hazard: tuple[float, ...]
    planned_hazard: tuple[float, ...] | None = None


WARDS = (
    Ward("Larch", "General Medicine", 28, 3.9, 0.12,
         (0.05, 0.16, 0.22, 0.24, 0.24, 0.23, 0.22, 0.21, 0.20)),
    Ward("Alder", "General Surgery", 20, 1.5, 0.06,
         (0.05, 0.18, 0.24, 0.26, 0.25, 0.24, 0.22, 0.20),
         planned_hazard=(0.08, 0.40, 0.45, 0.40, 0.30)),
    Ward("Rowan", "Care of Older People", 24, 1.5, 0.18,
         (0.02, 0.06, 0.09, 0.11, 0.12, 0.12, 0.12, 0.115, 0.11, 0.105, 0.10)),
)  # fmt: skip


def expected_admissions(ward: Ward, days: pd.DatetimeIndex) -> np.ndarray:
    """Expected emergency admissions per day (before noise)."""
    weekday = WEEKDAY_FACTORS[days.day_of_week] / WEEKDAY_FACTORS[:5].mean()
    angle = 2 * np.pi * (days.day_of_year - PEAK_DAY_OF_YEAR) / 365.25
    years = (days - days[0]).days / 365.25
    return ward.level * weekday * (1 + ward.winter * np.cos(angle)) * (1 + TREND_PER_YEAR) ** years


def arrivals(rng: np.random.Generator, ward: Ward, days: pd.DatetimeIndex):
    """Minutes (from 00:00 of the first day) at which patients need a bed, in order, and
    whether each is planned."""
    noise, shocks = np.zeros(len(days)), rng.normal(0.0, NOISE_SD, len(days))
    for t in range(1, len(days)):
        noise[t] = NOISE_AR * noise[t - 1] + shocks[t]
    counts = rng.poisson(expected_admissions(ward, days) * np.exp(noise))
    day = np.repeat(np.arange(len(days)), counts)
    hour = rng.choice(24, size=day.size, p=ADMISSION_HOURS / ADMISSION_HOURS.sum())
    minutes = day * MINUTES_PER_DAY + hour * 60 + rng.integers(0, 60, day.size)
    planned = np.zeros(day.size, dtype=bool)
    if ward.planned_hazard is not None:
        listed = (days.day_of_week < 5) & ~days.isin(pd.to_datetime(HOLIDAYS))
        booked = np.where(listed, rng.binomial(BOOKED, ATTENDS, len(days)), 0)
        list_day = np.repeat(np.arange(len(days)), booked)
        minutes = np.concatenate((minutes, list_day * MINUTES_PER_DAY + LIST_MINUTE))
        planned = np.concatenate((planned, np.ones(list_day.size, dtype=bool)))
    order = np.argsort(minutes, kind="stable")
    return minutes[order], planned[order]


def discharge_minute(rng: np.random.Generator, hazard, bed_minute: int, first_weekday: int) -> int:
    """When a patient who took a bed at ``bed_minute`` leaves (module docstring)."""
    day, clock = divmod(bed_minute, MINUTES_PER_DAY)
    k = 0
    while True:
        base = hazard[min(k, len(hazard) - 1)]
        odds = base / (1 - base) * DISCHARGE_ODDS[(first_weekday + day + k) % 7]
        if rng.random() < odds / (1 + odds):
            break
        k += 1
    cumulative = np.concatenate(([0.0], np.cumsum(DISCHARGE_HOURS)))
    after = clock / 60 if k == 0 else 0.0
    hour = int(after)
    floor = cumulative[hour] + DISCHARGE_HOURS[hour] * (after - hour)
    if floor >= 1 - 1e-12:  # nothing later in the profile: evenly over the rest of the day
        hours = rng.uniform(after, 24.0)
    else:
        u = floor + rng.random() * (1 - floor)
        hour = min(int(np.searchsorted(cumulative, u, side="right")) - 1, 23)
        hours = hour + (u - cumulative[hour]) / DISCHARGE_HOURS[hour]
    return (day + k) * MINUTES_PER_DAY + max(int(hours * 60), clock if k == 0 else 0)


def simulate_ward(rng: np.random.Generator, ward: Ward, days: pd.DatetimeIndex):
    """Play the ward's patients through its beds. Returns each patient's arrival minute, bed
    minute and discharge minute (-1: never took a bed), planned flags, and the census at each
    24:00: patients who took a bed before it and leave after it."""
    arriving, planned = arrivals(rng, ward, days)
    first_weekday = days[0].day_of_week
    bed = np.full(arriving.size, -1, dtype=np.int64)
    leave = np.full(arriving.size, -1, dtype=np.int64)
    census = np.zeros(len(days), dtype=np.int64)
    leaving: list[tuple[int, int]] = []  # (discharge minute, patient), a heap
    waiting: deque[int] = deque()
    occupied, i, day, never = 0, 0, 0, np.iinfo(np.int64).max

    def take_bed(patient: int, minute: int) -> None:
        nonlocal occupied
        hazard = ward.planned_hazard if planned[patient] else ward.hazard
        bed[patient] = minute
        leave[patient] = discharge_minute(rng, hazard, minute, first_weekday)
        heapq.heappush(leaving, (int(leave[patient]), patient))
        occupied += 1

    while day < len(days):
        midnight = (day + 1) * MINUTES_PER_DAY
        arrival = int(arriving[i]) if i < arriving.size else never
        discharge = leaving[0][0] if leaving else never
        if midnight <= min(arrival, discharge):  # discharges at 24:00 count as gone
            census[day] = occupied - sum(1 for minute, _ in leaving if minute == midnight)
            day += 1
        elif discharge <= arrival:  # a bed freed and refilled at one minute is one bed
            heapq.heappop(leaving)
            occupied -= 1
            if waiting:
                take_bed(waiting.popleft(), discharge)
        else:
            if occupied < ward.beds:
                take_bed(i, arrival)
            else:
                waiting.append(i)
            i += 1
    return arriving, bed, leave, planned, census


def hospital(seed: int = SEED) -> tuple[pd.DataFrame, pd.DataFrame]:
    """The export's rows (one per stay in a bed, by bed time, then ward) and the truth (per
    ward and day: admissions and the census at 24:00)."""
    days = pd.date_range(FIRST_DAY, LAST_DAY, freq="D")
    end = len(days) * MINUTES_PER_DAY
    stays, truths = [], []
    streams = np.random.SeedSequence(seed).spawn(len(WARDS))
    for ward, stream in zip(WARDS, streams, strict=True):
        arriving, bed, leave, planned, census = simulate_ward(
            np.random.default_rng(stream), ward, days
        )
        took = bed >= 0
        start = days[0] + pd.to_timedelta(bed[took], unit="min")
        finish = pd.Series(days[0] + pd.to_timedelta(leave[took], unit="min"))
        stays.append(pd.DataFrame({
            "ward": ward.name, "specialty": ward.specialty,
            "method": np.where(planned[took], "Elective", "Emergency"),
            "admitted_at": start, "discharged_at": finish.where(leave[took] < end),
        }))  # fmt: skip
        admitted = np.bincount(bed[took] // MINUTES_PER_DAY, minlength=len(days))
        truths.append(pd.DataFrame({"date": days, "ward": ward.name, "beds": ward.beds,
                                    "admissions": admitted, "census": census}))  # fmt: skip
        waits = (bed[took] - arriving[took]) / 60
        print(
            f"{ward.name}: {took.sum()} stays ({planned[took].sum()} planned), mean census "
            f"{census.mean():.1f} of {ward.beds} beds, {np.mean(waits > 0):.1%} waited for a "
            f"bed (mean {waits[waits > 0].mean():.1f} h), {(~took).sum()} still waiting"
        )
    table = pd.concat(stays, ignore_index=True)
    table = table.sort_values(["admitted_at", "ward"], kind="stable").reset_index(drop=True)
    table.insert(0, "patient", [f"KV{100001 + i}" for i in range(len(table))])
    return table, pd.concat(truths, ignore_index=True)


def write_export(table: pd.DataFrame) -> None:
    """The export as CSV (day-first times, NULL for a patient still in) and as a workbook."""
    from openpyxl import Workbook

    left = table["discharged_at"].dt.strftime(DAY_FIRST).fillna("NULL")
    text = pd.DataFrame({
        HEADER[0]: table["patient"], HEADER[1]: table["ward"], HEADER[2]: table["specialty"],
        HEADER[3]: table["method"], HEADER[4]: table["admitted_at"].dt.strftime(DAY_FIRST),
        HEADER[5]: left,
    })  # fmt: skip
    text.to_csv(EXPORT, index=False, lineterminator="\n")
    book = Workbook(write_only=True)
    sheet = book.create_sheet("Stays")
    sheet.append(HEADER)
    for row in table.itertuples(index=False):
        out = "NULL" if pd.isna(row.discharged_at) else row.discharged_at.to_pydatetime()
        sheet.append([row.patient, row.ward, row.specialty, row.method,
                      row.admitted_at.to_pydatetime(), out])  # fmt: skip
    book.save(WORKBOOK)
    _same_bytes(WORKBOOK)


def _same_bytes(path: Path, moment: datetime = datetime(2026, 11, 30)) -> None:
    """Rewrite a workbook with its save time and its entries' times fixed, so that the same
    rows always give the same file."""
    with zipfile.ZipFile(path) as source:
        entries = [(info, source.read(info)) for info in source.infolist()]
    stamp = moment.strftime("%Y-%m-%dT%H:%M:%SZ").encode()
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as target:
        for info, data in entries:
            if info.filename == "docProps/core.xml":
                data = re.sub(rb"\d{4}-\d\d-\d\dT\d\d:\d\d:\d\dZ", stamp, data)
            info.date_time = moment.timetuple()[:6]
            target.writestr(info, data)


def main() -> None:
    table, truth = hospital()
    DATA.mkdir(exist_ok=True)
    write_export(table)
    truth.to_csv(TRUTH, index=False, date_format="%Y-%m-%d", lineterminator="\n")
    still = table["discharged_at"].isna().sum()
    print(f"{len(table)} stays, {still} still in at the end; written: {EXPORT.name}, "
          f"{WORKBOOK.name}, {TRUTH.name}")  # fmt: skip


if __name__ == "__main__":
    main()

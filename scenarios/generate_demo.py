"""Generate the invented demo history for Larch Ward, Kestrel Vale District Hospital.

Both the hospital and the ward are fictional. The ward is a 28-bed general medical ward
taking emergency admissions. The generating process (all values invented for the demo):

* expected admissions per day: 4.0 on a typical weekday, with a weekday pattern (Monday
  busiest, weekends at about 0.78 of weekdays), an annual cycle peaking in mid-January
  (+12%) and a slow upward trend of 1.5% a year;
* day-to-day noise: a latent log-rate following an AR(1) process (coefficient 0.5, sd 0.08),
  so busy days cluster, then Poisson counts;
* admission times follow an hour-of-day profile (quiet overnight, busiest mid-afternoon to
  evening); length of stay is lognormal (mean 5 days, sd 4.5 days) and discharges happen
  between 10:00 and 18:00.

Run from the project folder to rewrite scenarios/data/ (the output is committed, so the demo
needs no generation step):

    python scenarios/generate_demo.py
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

SEED = 20261201
FIRST_DAY = "2023-01-02"
LAST_DAY = "2026-11-29"
WEEKDAY_LEVEL = 4.0
WEEKDAY_FACTORS = np.array([1.12, 1.04, 1.01, 0.99, 0.98, 0.79, 0.77])  # Monday..Sunday
WINTER_PEAK = 0.12  # relative amplitude of the annual cycle
PEAK_DAY_OF_YEAR = 15
TREND_PER_YEAR = 0.015
NOISE_AR = 0.5
NOISE_SD = 0.08
STAY_MEAN_DAYS = 5.0
STAY_SD_DAYS = 4.5
# Share of emergency admissions by hour of day, 00:00..23:00 (sums to 1 after normalising).
ADMISSION_HOURS = np.array(
    [2, 1.5, 1.2, 1, 1, 1, 1.2, 1.5, 2, 3, 4, 5, 6, 6.5, 7, 7, 7, 6.5, 6, 5.5, 5, 4, 3.5, 2.5]
)
DISCHARGE_HOURS = (10, 18)

DATA = Path(__file__).resolve().parent / "data"


def expected_admissions(days: pd.DatetimeIndex) -> np.ndarray:
    """Expected emergency admissions per day (before noise)."""
    weekday = WEEKDAY_FACTORS[days.day_of_week] / WEEKDAY_FACTORS[:5].mean()
    season = 1 + WINTER_PEAK * np.cos(2 * np.pi * (days.day_of_year - PEAK_DAY_OF_YEAR) / 365.25)
    years = (days - days[0]).days / 365.25
    return WEEKDAY_LEVEL * weekday * season * (1 + TREND_PER_YEAR) ** years


def daily_admissions(rng: np.random.Generator, days: pd.DatetimeIndex) -> np.ndarray:
    """Poisson counts around the expected level, with AR(1) noise on the log-rate."""
    noise = np.zeros(len(days))
    shocks = rng.normal(0.0, NOISE_SD, len(days))
    for t in range(1, len(days)):
        noise[t] = NOISE_AR * noise[t - 1] + shocks[t]
    return rng.poisson(expected_admissions(days) * np.exp(noise))


def episodes(rng: np.random.Generator, days: pd.DatetimeIndex, counts: np.ndarray) -> pd.DataFrame:
    """Admission and discharge timestamps for every admission; discharges after the last
    day of the history are left empty (the patient is still on the ward)."""
    profile = ADMISSION_HOURS / ADMISSION_HOURS.sum()
    day_of = np.repeat(days.to_numpy(), counts)
    hours = rng.choice(24, size=len(day_of), p=profile) + rng.random(len(day_of))
    admitted = pd.to_datetime(day_of) + pd.to_timedelta(hours, unit="h")
    sigma2 = np.log(1 + (STAY_SD_DAYS / STAY_MEAN_DAYS) ** 2)
    stays = rng.lognormal(np.log(STAY_MEAN_DAYS) - sigma2 / 2, np.sqrt(sigma2), len(day_of))
    leave_day = (admitted + pd.to_timedelta(stays, unit="D")).normalize()
    leave_hour = rng.uniform(*DISCHARGE_HOURS, len(day_of))
    discharged = leave_day + pd.to_timedelta(leave_hour, unit="h")
    too_soon = discharged <= admitted + pd.Timedelta(hours=2)
    discharged = discharged.where(~too_soon, discharged + pd.Timedelta(days=1))
    end = pd.Timestamp(LAST_DAY) + pd.Timedelta(days=1)
    discharged = discharged.floor("min").where(discharged < end)
    return pd.DataFrame({"admitted_at": admitted.floor("min"), "discharged_at": discharged})


def main() -> None:
    rng = np.random.default_rng(SEED)
    days = pd.date_range(FIRST_DAY, LAST_DAY, freq="D")
    counts = daily_admissions(rng, days)
    DATA.mkdir(exist_ok=True)
    daily = pd.DataFrame({"date": days.strftime("%Y-%m-%d"), "admissions": counts})
    daily.to_csv(DATA / "larch_admissions.csv", index=False, lineterminator="\n")
    records = episodes(rng, days, counts)
    records.to_csv(
        DATA / "larch_episodes.csv", index=False, date_format="%Y-%m-%d %H:%M", lineterminator="\n"
    )
    print(f"{len(days)} days, {counts.sum()} admissions, mean {counts.mean():.2f}/day")
    print(f"still on the ward at the end: {records['discharged_at'].isna().sum()}")


if __name__ == "__main__":
    main()

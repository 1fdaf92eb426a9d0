"""Discharge timing learned from episodes: the day of stay and weekday of a discharge, and
its hour of the day.

Days of stay. A patient admitted on calendar day A is on day of stay k = 0, 1, 2, ... on day
A + k (admitted on a Monday, discharged on the Wednesday: day of stay 2, 2 midnights on the
ward). Weekdays run 0 (Monday) to 6 (Sunday).

Hazard. The probability of discharge on day of stay k, a weekday w, for a patient on the ward
when that day starts (the admission day counts) is h with ``logit h = alpha_min(k, K) +
beta_w``, beta_0 = 0 (Monday the reference). K (``pooled_from``, default 21): three separate
weeks hold most discharges (98.5% of the demo ward's), while a later day has too few for a rate
of its own (the demo ward: at most 15 a day in four years) and a rate that changes little. K
is lowered, if needed, to the largest value at which each separate day from day of stay 1 on,
and the pooled group, has ``MINIMUM_PER_DAY`` discharges and as many patients staying on.

Fit. Maximum likelihood on patient-days: a Bernoulli row per day of stay an episode was on the
ward at the start of, 1 on its discharge day, 0 before. The records are known to ``moment``
(00:00 of a day): later admissions are left out; earlier ones not discharged before it are
censored there, with their days before ``moment`` at 0 (as
:func:`planner.records.ward_history.stays_at`; a discharge at exactly ``moment`` falls on the
day after the records and is censored too). The rows are counted into (day of stay, weekday)
cells with binomial counts and fitted by Newton-Raphson on the cells, so the cost does not grow
with the patient-days. Standard errors: inverse Fisher information; log-likelihood: that of the
patient-day rows (nats).

Hour. Discharge hours (0..23, clock time as recorded) of completed episodes are counted by the
discharge day's weekday; weekday w's profile is (c_w + m p) / (n_w + m): its counts c_w (n_w
discharges) plus the pooled profile p with the weight of m = ``PROFILE_PSEUDO_DISCHARGES``
discharges, so a weekday with few discharges stays close to p and one with many keeps its own.
The levers ``earlier`` and ``seven_day`` give a new :class:`DischargeTiming` (fit's errors kept).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np
import pandas as pd

from planner.errors import PlannerError
from planner.simulate.logit_fit import newton_fit

DAYS_PER_WEEK = 7
HOURS_PER_DAY = 24
WEEKDAYS = ("Monday", "Tuesday", "Wednesday", "Thursday", "Friday", "Saturday", "Sunday")
WEEKEND = slice(5, 7)
#: Days of stay 0..K-1 get a rate each, later days one pooled rate (K, see the docstring).
POOLED_FROM_DAY = 21
#: Fewest discharges, and patients staying on, of a separate day of stay or the pooled group.
MINIMUM_PER_DAY = 10
#: Weight of the pooled hour profile in each weekday's profile, in discharges.
PROFILE_PSEUDO_DISCHARGES = 24
#: The arrays of a DischargeTiming, copied and made read-only.
ARRAYS = ("alpha", "beta", "covariance", "hour_profile", "pooled_profile", "discharges_by_weekday")


@dataclass(frozen=True, eq=False)
class DischargeTiming:
    """The fitted discharge timing (module docstring). ``alpha``: (K + 1,) logit hazards of
    days of stay 0..K-1 and K on, on Mondays; ``beta``: (7,) logit weekday effects, Monday 0;
    ``covariance``: inverse Fisher information of (alpha_0..alpha_K, beta_1..beta_6);
    ``hour_profile``: (7, 24) shares of a weekday's discharges by hour; ``pooled_profile``:
    (24,) all weekdays'; ``discharges_by_weekday``: completed episodes by weekday of
    discharge; ``episodes`` (completed and censored), ``patient_days`` at risk,
    ``log_likelihood`` (nats) at the maximum; ``levers``: changes made since the fit."""

    alpha: np.ndarray
    beta: np.ndarray
    covariance: np.ndarray
    hour_profile: np.ndarray
    pooled_profile: np.ndarray
    discharges_by_weekday: np.ndarray
    episodes: int
    patient_days: int
    log_likelihood: float
    levers: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        for name in ARRAYS:
            values = np.array(getattr(self, name))
            values.setflags(write=False)
            object.__setattr__(self, name, values)

    @property
    def pooled_from(self) -> int:
        """K: the first day of stay of the pooled rate."""
        return self.alpha.size - 1

    @property
    def alpha_se(self) -> np.ndarray:
        return np.sqrt(np.diag(self.covariance)[: self.alpha.size])

    @property
    def beta_se(self) -> np.ndarray:
        """Standard errors of ``beta``, 0 for Monday (the reference)."""
        return np.concatenate(([0.0], np.sqrt(np.diag(self.covariance)[self.alpha.size :])))

    def hazard(self, k, weekday) -> np.ndarray:
        """Probability of discharge on day of stay ``k`` (>= 0) falling on ``weekday`` (0 =
        Monday) for a patient on the ward when the day starts; arrays broadcast."""
        k = np.minimum(np.asarray(k, dtype=np.int64), self.pooled_from)
        logit = self.alpha[k] + self.beta[np.asarray(weekday, dtype=np.int64)]
        return 1.0 / (1.0 + np.exp(-np.clip(logit, -700, 700)))

    def survival_days(self, admission_weekday: int, max_days: int) -> np.ndarray:
        """(max_days,) probability of still being on the ward at the end of day of stay
        0..max_days-1, for a patient admitted on ``admission_weekday`` (0 = Monday)."""
        k = np.arange(max_days)
        return np.cumprod(1.0 - self.hazard(k, (admission_weekday + k) % DAYS_PER_WEEK))

    def mean_nights(self, admission_weekday: int) -> float:
        """Expected day of stay of the discharge (midnights on the ward, days) for a patient
        admitted on ``admission_weekday``: the sum of :meth:`survival_days` over all days, the
        days from K on summed in closed form (the hazard repeats every week there)."""
        survival = self.survival_days(admission_weekday, self.pooled_from + DAYS_PER_WEEK)
        last_week = survival[self.pooled_from :]
        staying = np.prod(1.0 - self.hazard(self.pooled_from, np.arange(DAYS_PER_WEEK)))
        return float(survival[: self.pooled_from].sum() + last_week.sum() / (1.0 - staying))

    @property
    def mean_stay(self) -> float:
        """Mean day of stay of the discharge (nights), averaged over admission weekdays."""
        return float(np.mean([self.mean_nights(day) for day in range(DAYS_PER_WEEK)]))

    def with_mean_nights(self, nights: float) -> DischargeTiming:
        """Stays lengthened or shortened to a mean of ``nights`` (:attr:`mean_stay`) by one
        change of every day's discharge odds (the same amount added to each ``alpha``), which
        keeps the weekday effects and the hours."""
        if not nights > 0:
            raise PlannerError(f"stay change: the mean stay would be {nights:.2f} nights; need > 0")

        def gap(shift: float) -> float:
            return replace(self, alpha=self.alpha + shift).mean_stay - nights

        from scipy.optimize import brentq  # only for this lever: a run need not load scipy

        low, high = -30.0, 30.0
        if gap(low) < 0 or gap(high) > 0:
            raise PlannerError(f"stay change: cannot reach a mean stay of {nights:.2f} nights")
        shift = brentq(gap, low, high, xtol=1e-12)
        levers = (*self.levers, f"mean stay changed to {nights:.1f} nights")
        return replace(self, alpha=self.alpha + shift, levers=levers)

    def describe(self) -> str:
        """One line for reports: the weekend's discharge odds against weekdays', the share of
        discharges 12:00-18:00 and the mean stay (nights, averaged over admission weekdays)."""
        weekend = math.exp(self.beta[WEEKEND].mean() - self.beta[:5].mean())
        afternoon = self.pooled_profile[12:18].sum()
        nights = self.mean_stay
        return "; ".join((
            f"discharge hazard by day of stay (days 0-{self.pooled_from - 1} each, "
            f"{self.pooled_from}+ pooled) with a weekday effect: weekend discharge odds "
            f"{weekend:.2f}x weekdays'", f"{afternoon:.0%} of discharges 12:00-18:00",
            f"mean stay {nights:.1f} nights", *self.levers))  # fmt: skip

    def earlier(self, hours: int) -> DischargeTiming:
        """Every discharge ``hours`` (whole hours, 0-23) earlier on the same day: each
        profile's share of hour h moves to hour h - hours; shares that would move before
        00:00 are kept at hour 0 (a discharge does not move to the previous day)."""
        whole = isinstance(hours, int | np.integer) and not isinstance(hours, bool)
        if not whole or not 0 <= hours < HOURS_PER_DAY:
            raise PlannerError(f"discharge earlier: need whole hours 0 to 23, got {hours!r}")
        both = _shift_earlier(np.vstack((self.hour_profile, self.pooled_profile)), hours)
        levers = (*self.levers, f"discharges {hours} h earlier")
        return replace(self, hour_profile=both[:7], pooled_profile=both[7], levers=levers)

    def before_noon(self, share: float) -> DischargeTiming:
        """At least ``share`` (0-1) of each weekday's discharges before 12:00: where fewer
        leave by noon, the morning hours' shares are scaled up together and the afternoon's
        down together (each keeps its shape); weekdays already there are left alone."""
        if not 0.0 <= share <= 1.0:
            raise PlannerError(f"discharges before noon: share must be 0 to 1, got {share}")
        both = np.vstack((self.hour_profile, self.pooled_profile))
        morning = both[:, :12].sum(axis=1, keepdims=True)
        low = (morning < share)[:, 0]
        if np.any(low & (morning[:, 0] <= 0.0)):
            raise PlannerError(
                f"discharges before noon: the records show no discharge before 12:00 on some "
                f"weekday, so no share of {share:.0%} can be scaled up from them"
            )
        scaled = both.copy()
        scaled[low, :12] *= share / morning[low]
        scaled[low, 12:] *= (1.0 - share) / (1.0 - morning[low])
        levers = (*self.levers, f"at least {share:.0%} of discharges before noon")
        return replace(self, hour_profile=scaled[:7], pooled_profile=scaled[7], levers=levers)

    def seven_day(self, fraction: float) -> DischargeTiming:
        """Weekend discharging moved toward weekdays': the Saturday and Sunday effects move by
        ``fraction`` (0-1) of their distance to the mean Monday-Friday effect (logit scale);
        1 makes both equal to that mean."""
        if not 0.0 <= fraction <= 1.0:
            raise PlannerError(f"seven-day discharging: fraction must be 0 to 1, got {fraction}")
        beta = self.beta.copy()
        beta[WEEKEND] += fraction * (beta[:5].mean() - beta[WEEKEND])
        levers = (*self.levers, f"seven-day discharging {fraction:.0%}")
        return replace(self, beta=beta, levers=levers)


def describe_discharges(timing: DischargeTiming | None, note: str = "") -> str:
    """How a ward model draws discharges, in one line for the terminal and the reports:
    ``timing`` (None: stays as durations) and the note on why, if any."""
    if timing is not None:
        return f"calendar timing learned from the episodes: {timing.describe()}"
    return note or "stays drawn as durations from the bed time (discharge.timing)"


def _shift_earlier(profiles: np.ndarray, hours: int) -> np.ndarray:
    """Rows of 24 hourly shares moved ``hours`` earlier, hours 0..``hours`` gathered at 0."""
    shifted = np.zeros_like(profiles)
    shifted[:, 0] = profiles[:, : hours + 1].sum(axis=1)
    shifted[:, 1 : HOURS_PER_DAY - hours] = profiles[:, hours + 1 :]
    return shifted


def _wall_clock(times: pd.Series) -> pd.Series:
    if not pd.api.types.is_datetime64_any_dtype(times):
        raise PlannerError(f"episodes: {times.name} must hold date-times, got {times.dtype}")
    return times.dt.tz_localize(None) if times.dt.tz is not None else times


def episode_days(episodes: pd.DataFrame, moment: pd.Timestamp) -> dict[str, np.ndarray]:
    """The episodes known at ``moment`` (00:00 of a day) as days of stay: ``weekday`` of
    the admission day (0 = Monday), ``rows`` (days of stay at risk, >= 1), ``ended`` (bool,
    completed by ``moment``), and for the completed ones ``stay_day`` (day of stay of the
    discharge), ``discharge_weekday`` and ``discharge_hour`` (0..23)."""
    moment = pd.Timestamp(moment).tz_localize(None)
    if moment != moment.normalize():
        raise PlannerError(f"discharge timing: the records' moment {moment} must be 00:00 of a day")
    if episodes.empty:
        raise PlannerError("discharge timing: no episodes to fit")
    admitted = _wall_clock(episodes["admitted_at"])
    discharged = _wall_clock(episodes["discharged_at"])
    if admitted.isna().any() or (discharged < admitted).any():
        raise PlannerError("episodes: every episode needs an admission, before its discharge")
    known = (admitted < moment).to_numpy()
    if not known.any():
        raise PlannerError(
            f"discharge timing: the records' moment {moment:%Y-%m-%d} is not after the first "
            f"admission ({admitted.min()}); no episodes to fit"
        )
    admitted, discharged = admitted[known], discharged[known]
    ended = (discharged < moment).to_numpy()  # NaT compares False: censored
    if not ended.any():
        raise PlannerError(f"discharge timing: no episode completed by {moment:%Y-%m-%d}")
    start = (admitted.dt.normalize() - moment).dt.days.to_numpy()  # days before moment, < 0
    end = (discharged[ended].dt.normalize() - moment).dt.days.to_numpy()
    stay_day = end - start[ended]
    rows = -start
    rows[ended] = stay_day + 1
    weekday = (moment.weekday() + start) % DAYS_PER_WEEK
    hour = discharged[ended].dt.hour.to_numpy()
    return dict(weekday=weekday, rows=rows, ended=ended, stay_day=stay_day,
                discharge_weekday=(weekday[ended] + stay_day) % 7, discharge_hour=hour)  # fmt: skip


def cell_counts(days: dict[str, np.ndarray], pooled_from: int) -> tuple[np.ndarray, np.ndarray]:
    """Patient-days at risk and discharges, each (K + 1, 7): row min(k, K) for day of stay
    k, column the weekday of the calendar day, from :func:`episode_days`."""
    weekday, rows, top = days["weekday"], days["rows"], pooled_from
    # in_at_start[a, k]: episodes admitted on weekday a still in at the start of day k (< K).
    ends = np.bincount(weekday * (top + 1) + np.minimum(rows, top), minlength=7 * (top + 1))
    in_at_start = ends.reshape(DAYS_PER_WEEK, top + 1)[:, ::-1].cumsum(axis=1)[:, ::-1]
    at_risk = np.zeros((top + 1, DAYS_PER_WEEK), dtype=np.int64)
    k, a = np.arange(top), np.arange(DAYS_PER_WEEK)[:, None]
    at_risk[k, (a + k) % DAYS_PER_WEEK] = in_at_start[:, 1:]
    # Days K..rows-1 of long stays, counted by residue r of k modulo 7: k in [0, n) with
    # k % 7 == r number (n - r + 6) // 7.
    long, r = rows > top, np.arange(DAYS_PER_WEEK)
    per_residue = (rows[long, None] - r + 6) // 7 - (top - r + 6) // 7
    pooled = np.bincount(((weekday[long, None] + r) % 7).ravel(), per_residue.ravel(), 7)
    at_risk[top] = np.rint(pooled).astype(np.int64)
    stay_day = days["stay_day"]
    cells = np.minimum(stay_day, top) * 7 + days["discharge_weekday"]
    events = np.bincount(cells, minlength=7 * (top + 1)).reshape(top + 1, DAYS_PER_WEEK)
    return at_risk, events


def usable_pooled_from(at_risk: np.ndarray, events: np.ndarray) -> int:
    """The largest K up to the table's at which days of stay 1..K-1 and the pooled group
    each have ``MINIMUM_PER_DAY`` discharges and patients staying on (see the docstring)."""
    discharged = events.sum(axis=1)
    staying = at_risk.sum(axis=1) - discharged
    thin = np.minimum(discharged, staying) < MINIMUM_PER_DAY
    tail = np.minimum(discharged[::-1].cumsum(), staying[::-1].cumsum())[::-1]  # day k on
    for top in range(at_risk.shape[0] - 1, 0, -1):
        if not thin[1:top].any() and tail[top] >= MINIMUM_PER_DAY:
            return top
    raise PlannerError(
        f"discharge timing: only {discharged[1:].sum()} discharges after the admission day; "
        f"need at least {MINIMUM_PER_DAY}"
    )


def fit_discharge_timing(
    episodes: pd.DataFrame, moment: pd.Timestamp, pooled_from: int = POOLED_FROM_DAY
) -> DischargeTiming:
    """Fit the discharge timing (module docstring) to ``episodes`` (``admitted_at``,
    ``discharged_at`` date-times, NaT = still on the ward) as known at ``moment``."""
    days = episode_days(episodes, moment)
    at_risk, events = cell_counts(days, max(int(pooled_from), 1))
    top = usable_pooled_from(at_risk, events)
    at_risk = np.vstack([at_risk[:top], at_risk[top:].sum(axis=0)])
    events = np.vstack([events[:top], events[top:].sum(axis=0)])
    empty = [WEEKDAYS[w] + "s" for w in np.flatnonzero(events.sum(axis=0) == 0)]
    if events[0].sum() == 0:
        empty.append("the admission day (day of stay 0)")
    if empty:
        raise PlannerError(f"discharge timing: no discharge on {', '.join(empty)}; cannot fit")
    day, weekday = np.nonzero(at_risk)
    # Columns alpha_0..alpha_K, then beta_1..beta_6 (Monday's dropped): one-hot rows.
    design = np.eye(top + 1)[day]
    design = np.hstack((design, np.eye(DAYS_PER_WEEK)[weekday][:, 1:]))
    crude = (events.sum(axis=1) + 0.5) / (at_risk.sum(axis=1) + 1.0)
    start = np.concatenate((np.log(crude / (1 - crude)), np.zeros(DAYS_PER_WEEK - 1)))
    coef, covariance, log_likelihood = newton_fit(
        design, at_risk[day, weekday], events[day, weekday], start
    )
    cells = days["discharge_weekday"] * HOURS_PER_DAY + days["discharge_hour"]
    counts = np.bincount(cells, minlength=168).reshape(DAYS_PER_WEEK, HOURS_PER_DAY)
    pooled = counts.sum(axis=0) / counts.sum()
    m = PROFILE_PSEUDO_DISCHARGES
    profile = (counts + m * pooled) / (counts.sum(axis=1, keepdims=True) + m)
    beta = np.concatenate(([0.0], coef[top + 1 :]))
    return DischargeTiming(coef[: top + 1], beta, covariance, profile, pooled, counts.sum(axis=1),
                           days["rows"].size, int(at_risk.sum()), log_likelihood)  # fmt: skip

"""Discharge timing (day of stay, weekday and hour of discharge) checked against outside
references: statsmodels GLM on the patient-day rows written out one by one, recovery of a
known hazard and hour profile within the stated standard errors, the censoring of episodes
still on the ward, the definition of the survival function and the levers' definitions."""

from __future__ import annotations

import dataclasses
import math
import subprocess
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
from scipy import stats

from planner.errors import PlannerError
from planner.simulate.discharge_fit import (
    MINIMUM_PER_DAY,
    DischargeTiming,
    cell_counts,
    episode_days,
    fit_discharge_timing,
)

FIRST_DAY = pd.Timestamp("2024-01-01")  # a Monday (from memory; checked below)
# The hazard this file simulates from: days of stay 0..20 and 21 on (logit of the Monday
# hazard), Friday +0.2, Saturday and Sunday log 0.5. Mean stay about 5.5 nights.
HAZARD = np.array([0.03, 0.12, 0.20, 0.24, 0.24, 0.24, 0.23, 0.22, 0.21, 0.20, 0.20,
                   0.19, 0.19, 0.18, 0.18, 0.17, 0.17, 0.16, 0.16, 0.15, 0.15, 0.12])  # fmt: skip
ALPHA = np.log(HAZARD / (1 - HAZARD))
BETA = np.array([0.0, 0.0, 0.0, 0.0, 0.2, math.log(0.5), math.log(0.5)])
# Hour profiles: nothing before 08:00 (admissions are simulated 00:00-08:00, so a same-day
# discharge always follows its admission); weekdays peak 14:00-16:00, weekends 11:00-13:00.
WEEKDAY_HOURS = np.array([1, 2, 3, 4, 6, 8, 10, 12, 12, 10, 8, 6, 4, 3, 2, 1], dtype=float)
WEEKEND_HOURS = np.array([2, 4, 6, 8, 8, 7, 6, 5, 4, 3, 2, 2, 1, 1, 1, 1], dtype=float)
PROFILE = np.zeros((7, 24))
PROFILE[:5, 8:] = WEEKDAY_HOURS / WEEKDAY_HOURS.sum()
PROFILE[5:, 8:] = WEEKEND_HOURS / WEEKEND_HOURS.sum()
EPISODES = 20_000
DEMO_EXPORT = Path(__file__).resolve().parents[1] / "scenarios" / "data" / "kestrel_vale_stays.csv"


def simulate(seed: int, n: int, days: int, beta: np.ndarray = BETA):
    """``n`` episodes admitted on days 0..days-1 from FIRST_DAY at 00:00-08:00, each staying
    day after day with the hazard above, discharged at an hour drawn from PROFILE of the
    discharge weekday. Returns the episodes and each one's day of stay of discharge."""
    rng = np.random.default_rng(seed)
    admit_day = rng.integers(0, days, n)
    weekday = (FIRST_DAY.weekday() + admit_day) % 7
    stay = np.full(n, -1)
    k = 0
    while (stay < 0).any():
        still = np.flatnonzero(stay < 0)
        logit = ALPHA[min(k, ALPHA.size - 1)] + beta[(weekday[still] + k) % 7]
        stay[still[rng.random(still.size) < 1 / (1 + np.exp(-logit))]] = k
        k += 1
    cdf = np.cumsum(PROFILE, axis=1)[(weekday + stay) % 7]
    hour = np.minimum((rng.random(n)[:, None] >= cdf).sum(axis=1), 23)
    admitted = FIRST_DAY + pd.to_timedelta(admit_day * 24 + rng.uniform(0, 8, n), unit="h")
    end_hours = (admit_day + stay) * 24 + hour + rng.random(n)
    discharged = FIRST_DAY + pd.to_timedelta(end_hours, unit="h")
    return pd.DataFrame({"admitted_at": admitted, "discharged_at": discharged}), stay


def known_at(episodes: pd.DataFrame, moment: pd.Timestamp) -> pd.DataFrame:
    """The records as known at ``moment``: later admissions left out, later discharges NaT."""
    known = episodes[episodes["admitted_at"] < moment].copy()
    known.loc[known["discharged_at"] >= moment, "discharged_at"] = pd.NaT
    return known


def patient_day_rows(episodes: pd.DataFrame, moment: pd.Timestamp, top: int) -> pd.DataFrame:
    """The patient-day rows written out one by one, calendar day by calendar day: (day of
    stay pooled at ``top``, weekday of the day, discharged that day)."""
    rows = []
    for admitted, discharged in episodes.itertuples(index=False):
        if admitted >= moment:
            continue
        ended = pd.notna(discharged) and discharged < moment
        day, k = admitted.normalize(), 0
        last = discharged.normalize() if ended else moment - pd.Timedelta(days=1)
        while day <= last:
            rows.append((min(k, top), day.weekday(), int(ended and day == last)))
            day, k = day + pd.Timedelta(days=1), k + 1
    return pd.DataFrame(rows, columns=["k", "weekday", "y"])


def truth(beta: np.ndarray = BETA) -> DischargeTiming:
    """The simulated model as a DischargeTiming (no fit: zero covariance)."""
    size = ALPHA.size + 6
    pooled = PROFILE.mean(axis=0)
    return DischargeTiming(ALPHA, beta, np.zeros((size, size)), PROFILE, pooled,
                           np.ones(7, dtype=np.int64), 1, 1, 0.0)  # fmt: skip


def coefficients(fit: DischargeTiming) -> np.ndarray:
    return np.concatenate((fit.alpha, fit.beta[1:]))


def wald_p(fit: DischargeTiming, true: np.ndarray, index=slice(None)) -> float:
    """P-value of the Wald chi-square of the fitted coefficients against ``true``."""
    difference = (coefficients(fit) - true)[index]
    covariance = fit.covariance[index, index]
    statistic = difference @ np.linalg.solve(covariance, difference)
    return float(stats.chi2.sf(statistic, difference.size))


def test_first_day_is_a_monday():
    # Source: the calendar (1 January 2024 was a Monday; from memory), checked by pandas.
    assert FIRST_DAY.day_name() == "Monday"


# --- the table and the fit against the reference library -----------------------------------


def small_ward() -> tuple[pd.DataFrame, pd.Timestamp]:
    """600 episodes over 120 days, known at day 100 (later ones left out, some censored),
    with a discharge at exactly the moment and an admission at exactly the moment."""
    episodes, _ = simulate(1, 600, 120)
    moment = FIRST_DAY + pd.Timedelta(days=100)
    edge = pd.DataFrame({"admitted_at": [moment - pd.Timedelta(hours=30), moment],
                         "discharged_at": [moment, moment + pd.Timedelta(hours=5)]})  # fmt: skip
    return pd.concat([known_at(episodes, moment + pd.Timedelta(days=1)), edge]), moment


@pytest.mark.parametrize("top", [3, 8, 21])
def test_cells_count_the_patient_day_rows(top):
    episodes, moment = small_ward()
    at_risk, events = cell_counts(episode_days(episodes, moment), top)
    rows = patient_day_rows(episodes, moment, top)
    # Source: definition of the patient-day rows (module docstring), written out one by one.
    expected_risk = np.zeros((top + 1, 7), dtype=np.int64)
    np.add.at(expected_risk, (rows["k"], rows["weekday"]), 1)
    expected_events = np.zeros((top + 1, 7), dtype=np.int64)
    np.add.at(expected_events, (rows["k"], rows["weekday"]), rows["y"])
    np.testing.assert_array_equal(at_risk, expected_risk)
    np.testing.assert_array_equal(events, expected_events)


def test_fit_matches_statsmodels_glm_on_the_patient_day_rows():
    episodes, moment = small_ward()
    fit = fit_discharge_timing(episodes, moment, pooled_from=8)
    assert fit.pooled_from == 8  # enough discharges on every day: nothing pooled further
    rows = patient_day_rows(episodes, moment, 8)
    design = np.column_stack(
        [(rows["k"] == k).to_numpy(float) for k in range(9)]
        + [(rows["weekday"] == w).to_numpy(float) for w in range(1, 7)]
    )
    # Source: discrete-time survival as binomial regression on person-periods (Allison,
    # Sociological Methodology 13 (1982) 61-98); statsmodels GLM, Binomial family with its
    # default logit link, as the reference library.
    reference = sm.GLM(rows["y"].to_numpy(float), design, family=sm.families.Binomial())
    result = reference.fit(tol=1e-13)
    np.testing.assert_allclose(coefficients(fit), result.params, rtol=1e-6)
    np.testing.assert_allclose(np.concatenate((fit.alpha_se, fit.beta_se[1:])), result.bse,
                               rtol=1e-6)  # fmt: skip
    assert fit.log_likelihood == pytest.approx(result.llf, rel=1e-6)
    assert fit.patient_days == len(rows)
    assert fit.episodes == int((episodes["admitted_at"] < moment).sum())
    assert fit.discharges_by_weekday.sum() == rows["y"].sum()


def test_thin_days_of_stay_are_pooled():
    episodes, moment = small_ward()
    fit = fit_discharge_timing(episodes, moment)  # K = 21 asked; 600 episodes are too few
    rows = patient_day_rows(episodes, moment, 40)
    discharged = rows.groupby("k")["y"].sum().reindex(range(41), fill_value=0).to_numpy()
    staying = rows.groupby("k").size().reindex(range(41), fill_value=0).to_numpy() - discharged

    def allowed(top: int) -> bool:
        tail = min(discharged[top:].sum(), staying[top:].sum())
        return min(*discharged[1:top], *staying[1:top], tail) >= MINIMUM_PER_DAY

    # Source: the pooling rule of the module docstring, applied to the rows written out.
    top = fit.pooled_from
    assert 1 < top < 21 and allowed(top) and not allowed(top + 1)


# --- recovery of a known model --------------------------------------------------------------


@pytest.fixture(scope="module")
def recovered():
    episodes, stay = simulate(2, EPISODES, 365)
    return fit_discharge_timing(episodes, FIRST_DAY + pd.Timedelta(days=1000)), episodes, stay


def test_fit_recovers_the_weekend_effects(recovered):
    fit, _, _ = recovered
    # Source: consistency of the maximum-likelihood estimate with its asymptotic normal
    # error (standard MLE theory); 20,000 episodes, SE about 0.03 on the logit scale.
    assert fit.pooled_from == 21
    for day in (5, 6):
        assert abs(fit.beta[day] - math.log(0.5)) < 3 * fit.beta_se[day]
    assert fit.beta_se[5] < 0.05
    # Source: Wald chi-square of all 28 coefficients against the truth (standard MLE theory).
    assert wald_p(fit, np.concatenate((ALPHA, BETA[1:]))) > 0.001


def test_fit_recovers_the_hour_profile(recovered):
    fit, _, _ = recovered
    support = PROFILE > 0
    assert np.all(fit.hour_profile[~support] == 0)
    # Source: Pearson's chi-square of multinomial shares (weekday w: n_w discharges) against
    # the true shares; the pooled-profile weight only narrows the spread.
    n = fit.discharges_by_weekday[:, None]
    statistic = np.sum(n * (fit.hour_profile - PROFILE) ** 2 / np.where(support, PROFILE, 1))
    assert stats.chi2.sf(statistic, int(support.sum()) - 7) > 0.001
    # Source: the truth's weekday and weekend profiles differ by far more than the errors.
    assert np.abs(fit.hour_profile[6] - PROFILE[0]).max() > 0.05


def test_censored_episodes_keep_the_fit_unbiased_and_dropping_them_does_not():
    episodes, _ = simulate(3, EPISODES, 28)
    moment = FIRST_DAY + pd.Timedelta(days=28)
    records = known_at(episodes, moment)
    censored = records["discharged_at"].isna().mean()
    assert 0.17 < censored < 0.23  # the set-up: about 20% still on the ward at the moment
    fit = fit_discharge_timing(records, moment)
    assert fit.pooled_from == 21
    # Source: censored maximum likelihood is consistent (standard MLE theory); as above.
    truth_vector = np.concatenate((ALPHA[: fit.pooled_from], [ALPHA[-1]], BETA[1:]))
    for day in (5, 6):
        assert abs(fit.beta[day] - math.log(0.5)) < 3 * fit.beta_se[day]
    assert wald_p(fit, truth_vector) > 0.001
    dropped = fit_discharge_timing(records.dropna(), moment, pooled_from=fit.pooled_from)
    # Source: completed stays alone over-represent short stays among late admissions, so the
    # hazard of late days of stay is overstated (length-biased sampling; from memory).
    late = slice(7, fit.pooled_from + 1)
    excess = (dropped.alpha - truth_vector[: fit.pooled_from + 1])[late]
    assert np.all(excess > 0)
    assert wald_p(dropped, truth_vector, late) < 1e-9


# --- the survival function ------------------------------------------------------------------


@pytest.mark.parametrize("admission_weekday", range(7))
def test_survival_days_is_the_product_of_one_minus_the_hazard(admission_weekday):
    survival = truth().survival_days(admission_weekday, 40)
    # Source: definition S(k) = prod_{j<=k} (1 - h_j), worked day by day.
    staying, expected = 1.0, []
    for k in range(40):
        logit = ALPHA[min(k, 21)] + BETA[(admission_weekday + k) % 7]
        staying *= 1 - 1 / (1 + math.exp(-logit))
        expected.append(staying)
    np.testing.assert_allclose(survival, expected, rtol=1e-12)


def test_mean_nights_is_the_sum_of_the_survival_function():
    flat = truth(np.zeros(7))
    # Source: E[N] = sum_k S(k) for a count N >= 0 (definition of the survival function);
    # past day 21 the hazard h is constant, so that tail sums to S(20) (1 - h) / h.
    survival = flat.survival_days(0, 21)
    tail = survival[-1] * (1 - HAZARD[-1]) / HAZARD[-1]
    for day in range(7):
        assert flat.mean_nights(day) == pytest.approx(survival.sum() + tail, rel=1e-12)
        assert flat.mean_nights(day) == pytest.approx(flat.survival_days(day, 3000).sum())


def test_mean_nights_matches_the_simulated_stays(recovered):
    _, episodes, stay = recovered
    weekday = episodes["admitted_at"].dt.day_of_week.to_numpy()
    for day in range(7):
        sample = stay[weekday == day]
        # Source: Monte Carlo mean of the simulated stays, 4 standard errors (sd / sqrt(n)).
        assert abs(truth().mean_nights(day) - sample.mean()) < 4 * sample.std() / math.sqrt(
            sample.size
        )


def test_hazard_broadcasts():
    hazard = truth().hazard(np.arange(30)[:, None], np.arange(7))
    assert hazard.shape == (30, 7)
    # Source: the model's definition, logit h = alpha_min(k, K) + beta_w.
    assert hazard[25, 6] == pytest.approx(1 / (1 + math.exp(-(ALPHA[21] + BETA[6]))))


# --- levers, description, immutability -----------------------------------------------------


def test_seven_day_moves_the_weekend_to_the_weekday_mean(recovered):
    fit, _, _ = recovered
    weekdays = fit.beta[:5].mean()
    # Source: the lever's definition (module docstring), worked by hand.
    np.testing.assert_allclose(fit.seven_day(1.0).beta[5:], [weekdays, weekdays], rtol=1e-12)
    np.testing.assert_allclose(fit.seven_day(0.5).beta[5:], (fit.beta[5:] + weekdays) / 2)
    np.testing.assert_array_equal(fit.seven_day(1.0).beta[:5], fit.beta[:5])
    assert fit.seven_day(1.0).mean_nights(4) < fit.mean_nights(4)
    with pytest.raises(PlannerError, match="fraction must be 0 to 1"):
        fit.seven_day(1.5)


def test_earlier_shifts_the_mean_hour(recovered):
    fit, _, _ = recovered
    hours = np.arange(24) + 0.5
    moved = fit.earlier(2)
    # Source: shifting a distribution by a constant shifts its mean by it (no mass before
    # 08:00 here, so none reaches 00:00).
    np.testing.assert_allclose(moved.hour_profile @ hours, fit.hour_profile @ hours - 2)
    assert moved.pooled_profile @ hours == pytest.approx(fit.pooled_profile @ hours - 2)
    np.testing.assert_array_equal(moved.alpha, fit.alpha)
    # Shares that would move before 00:00 stay at 00:00 (the lever's definition): 01:00 and
    # 03:00 end at 00:00, 05:00 at 02:00.
    hour = np.eye(24)
    night = dataclasses.replace(
        truth(), pooled_profile=0.25 * hour[1] + 0.25 * hour[3] + 0.5 * hour[5]
    )
    np.testing.assert_allclose(night.earlier(3).pooled_profile, 0.5 * hour[0] + 0.5 * hour[2])
    with pytest.raises(PlannerError, match="whole hours"):
        fit.earlier(1.5)


def test_describe_names_the_weekend_odds_and_the_afternoon_share(recovered):
    line = truth().earlier(1).describe()
    # Source: worked by hand: weekend odds exp(log 0.5 - 0.2 / 5) = 0.480; after the one-hour
    # shift, 12:00-18:00 holds what was 13:00-19:00: (8+10+12+12+10+8)/92 of weekday and
    # (7+6+5+4+3+2)/61 of weekend discharges, weekdays weighted equally in the pooled profile.
    afternoon = (5 * (8 + 10 + 12 + 12 + 10 + 8) / 92 + 2 * (7 + 6 + 5 + 4 + 3 + 2) / 61) / 7
    assert "weekend discharge odds 0.48x" in line
    assert f"{afternoon:.0%} of discharges 12:00-18:00" in line
    assert line.endswith("discharges 1 h earlier")
    assert "nights" in recovered[0].describe()


def test_the_result_is_immutable(recovered):
    fit = recovered[0]
    with pytest.raises(dataclasses.FrozenInstanceError):
        fit.alpha = fit.alpha
    with pytest.raises(ValueError):
        fit.beta[5] = 0.0


def test_fitting_imports_neither_statsmodels_nor_scipy_stats():
    code = (
        "import sys, pandas as pd\n"
        "from planner.simulate.discharge_fit import fit_discharge_timing\n"
        f"e = pd.read_csv({str(DEMO_EXPORT)!r}, na_values=['NULL']).query('Ward == \"Larch\"')\n"
        "t = {f: pd.to_datetime(e[c], format='%d/%m/%Y %H:%M') for f, c in "
        "(('admitted_at', 'Admission Date'), ('discharged_at', 'Discharge Date'))}\n"
        "d = pd.DataFrame(t)\n"
        "fit = fit_discharge_timing(d, pd.Timestamp('2026-12-01'))\n"
        "print([m for m in ('statsmodels', 'scipy.stats') if m in sys.modules])\n"
    )
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          check=True, timeout=120)  # fmt: skip
    # Source: the house rule (statsmodels costs 0.7 s of start-up; common practice).
    assert done.stdout.strip() == "[]"


# --- bad input ------------------------------------------------------------------------------


def test_no_completed_episode_is_a_planner_error():
    admitted = pd.to_datetime(["2024-03-01 10:00", "2024-03-02 11:00"])
    episodes = pd.DataFrame({"admitted_at": admitted, "discharged_at": pd.NaT})
    episodes["discharged_at"] = episodes["discharged_at"].astype(admitted.dtype)
    with pytest.raises(PlannerError, match="no episode completed by 2024-03-05"):
        fit_discharge_timing(episodes, pd.Timestamp("2024-03-05"))


def test_a_moment_before_the_first_admission_is_a_planner_error(recovered):
    episodes = recovered[1]
    with pytest.raises(PlannerError, match="not after the first admission"):
        fit_discharge_timing(episodes, FIRST_DAY - pd.Timedelta(days=3))


def test_other_bad_input_is_a_planner_error(recovered):
    episodes = recovered[1]
    with pytest.raises(PlannerError, match="must be 00:00 of a day"):
        fit_discharge_timing(episodes, FIRST_DAY + pd.Timedelta(days=400, hours=6))
    saturdays = episodes[episodes["discharged_at"].dt.day_of_week != 6]
    with pytest.raises(PlannerError, match="no discharge on Sundays"):
        fit_discharge_timing(saturdays, FIRST_DAY + pd.Timedelta(days=1000))

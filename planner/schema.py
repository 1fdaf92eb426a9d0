"""The scenario file's keys: types, defaults, limits and documentation in one table.

:data:`TOP` and :data:`TABLES` are the single source of truth:
:func:`planner.schema_checks.validate` checks a parsed TOML document against them,
:func:`choices` gives the allowed values of a key to the code that acts on them,
:func:`default` gives the settings dataclasses their defaults, and :func:`document` renders
them as the key reference in docs/scenario.md.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any


@dataclass(frozen=True)
class Key:
    """One scenario key. ``kind`` is one of: int, float, bool, str, date, hour ("HH:MM"),
    path, auto_bool (true, false or "auto"), dates (list of dates), roster (7 whole numbers),
    date_format (a strptime format giving day, month and year), column (a column name),
    names (a text or a list of texts), texts (a list of texts), encoding (a text encoding
    Python knows), sheet (a sheet name, or its number from 1)."""

    name: str
    kind: str
    default: Any
    doc: str
    unit: str = ""
    choices: tuple[str, ...] = ()
    minimum: float | None = None
    above: float | None = None
    required: bool = False


@dataclass(frozen=True)
class Table:
    """A TOML table (``many=False``) or array of tables (``many=True``)."""

    name: str
    doc: str
    keys: tuple[Key, ...]
    many: bool = False


TOP = (
    Key("name", "str", None, "Scenario name, shown in reports (default: the file name)."),
    Key("description", "str", "", "Free text shown under the report title."),
    Key(
        "extends",
        "path",
        None,
        "Another scenario file this one starts from; keys given "
        "here override it (tables merge key by key; arrays of tables are replaced whole).",
    ),
    Key("horizon_weeks", "int", 13, "Length of the forecast.", "weeks", minimum=1),
    Key(
        "start",
        "date",
        None,
        "First reported day (default: the day after the history ends). A later start "
        "forecasts and simulates the days in between from the ward as the records leave it "
        "and reports from start.",
    ),
    Key("paths", "int", 1000, "Number of simulated sample paths.", "paths", minimum=1),
    Key(
        "seed",
        "int",
        20261201,
        "Seed of all random numbers; the same seed gives the same results.",
        minimum=0,
    ),
)

TABLES = (
    Table(
        "history",
        "Input files, relative to the scenario file. Give episodes, admissions "
        "or both (then admissions feed the forecast and episodes the stays and current "
        "inpatients).",
        (
            Key(
                "admissions",
                "path",
                None,
                "Daily counts, CSV or .xlsx workbook, with columns date,admissions (or as "
                "history.columns names them), one row per day, oldest first or strictly newest "
                "first.",
            ),
            Key(
                "episodes",
                "path",
                None,
                "Episodes, CSV or .xlsx workbook, with columns admitted_at,discharged_at (or "
                "as history.columns names them); a discharge in history.still_on_ward (empty, "
                "NULL ...) = still on the ward.",
            ),
            Key(
                "date_format",
                "date_format",
                None,
                "How the daily file (and separate date columns of episodes) writes dates, as a "
                'strptime format, e.g. "%d/%m/%Y" for day-first 30/11/2026 (default: '
                "YYYY-MM-DD).",
            ),
            Key(
                "timestamp_format",
                "date_format",
                None,
                "How the episode file writes timestamps, e.g. "
                '"%d/%m/%Y %H:%M" (default: ISO, YYYY-MM-DD HH:MM); seconds are accepted '
                "after a format that stops at minutes.",
            ),
            Key(
                "fill_missing_days",
                "bool",
                False,
                "Count days missing from the daily file as 0 admissions "
                "(default: refuse a file with missing days).",
            ),
            Key(
                "over_beds",
                "str",
                "refuse",
                "When the episodes put more patients on the ward at the start than beds are "
                "open that day: refuse (the file probably holds several wards, or the beds are "
                "wrong) or allow (the ward really was over its beds; nobody is moved).",
                choices=("refuse", "allow"),
            ),
            Key(
                "ward",
                "names",
                None,
                "The ward (or list of wards) whose rows are read from files holding several, "
                "by the ward column (any case); each file then needs a ward column, and a "
                "listed ward that no row names is refused (default: every row, and a file "
                "whose ward column names several wards is refused).",
            ),
            Key(
                "specialty",
                "names",
                None,
                "The specialty (or list) whose rows are read, by the specialty column (any "
                "case); each file then needs a specialty column (default: every row).",
            ),
            Key(
                "planned_methods",
                "texts",
                [],
                "Values of the episodes' admission method column meaning a planned "
                '(elective) admission, e.g. ["Elective", "Booked"] (any case). With '
                "emergency_methods, every row's method must be in one of the two lists; the "
                'episodes then carry method = "planned" or "emergency".',
            ),
            Key(
                "emergency_methods",
                "texts",
                [],
                "Values of the admission method column meaning an emergency admission, e.g. "
                '["Emergency", "A&E", "GP referral"] (any case).',
            ),
            Key(
                "still_on_ward",
                "texts",
                ["", "NULL", "NA", "N/A", "None", "NaT"],
                "Values of an episode's discharge time meaning the patient is still on the "
                'ward (any case); "" is an empty cell. Giving the list replaces the default; '
                "a value outside it must be a time.",
            ),
            Key(
                "encoding",
                "encoding",
                None,
                'Text encoding of the CSV files, e.g. "utf-8", "cp1252", "latin-1", '
                '"utf-16" (default: UTF-8, else Windows-1252).',
            ),
            Key(
                "episodes_sheet",
                "sheet",
                None,
                "Sheet of an episodes workbook (.xlsx), by name or number (1 = first) "
                "(default: the workbook's only sheet).",
            ),
            Key(
                "admissions_sheet",
                "sheet",
                None,
                "Sheet of a daily counts workbook (.xlsx), by name or number (1 = first) "
                "(default: the workbook's only sheet).",
            ),
        ),
    ),
    Table(
        "history.columns",
        "The files' own column names for the tool's fields (header text, any case); a field "
        "not given is read from the column of its own name. A time is one column "
        "(admitted_at) or a date and a time column (admitted_date with admitted_time). One "
        "mapping serves both files.",
        (
            Key("admitted_at", "column", None, "Episodes: admission date and time."),
            Key("discharged_at", "column", None, "Episodes: discharge date and time."),
            Key(
                "admitted_date",
                "column",
                None,
                "Episodes: admission date, in its own column (with admitted_time; dates as "
                "history.date_format).",
            ),
            Key("admitted_time", "column", None, "Episodes: admission time, HH:MM[:SS]."),
            Key(
                "discharged_date",
                "column",
                None,
                "Episodes: discharge date, in its own column (with discharged_time).",
            ),
            Key("discharged_time", "column", None, "Episodes: discharge time, HH:MM[:SS]."),
            Key("date", "column", None, "Daily counts: the day."),
            Key("admissions", "column", None, "Daily counts: admissions that day."),
            Key("ward", "column", None, "Either file: the ward (for history.ward)."),
            Key("specialty", "column", None, "Either file: the specialty (for history.specialty)."),
            Key(
                "method",
                "column",
                None,
                "Episodes: the admission method (read with history.planned_methods and "
                "history.emergency_methods).",
            ),
            Key(
                "patient",
                "column",
                None,
                "Episodes: a patient or episode id; two rows are the same episode only when "
                "it matches too.",
            ),
        ),
    ),
    Table(
        "forecast",
        "How daily admissions are forecast.",
        (
            Key(
                "strategy",
                "str",
                "auto",
                "Multi-step strategy: one one-step AR model fed its "
                "own predictions, one model per horizon day, or the one scoring better in the "
                "backtest.",
                choices=("recursive", "direct", "auto"),
            ),
            Key(
                "max_lag",
                "int",
                28,
                "Largest AR order tried.",
                "days",
                minimum=1,
            ),
            Key(
                "min_lag",
                "int",
                1,
                "Smallest AR order tried; 0 lets the choice fall on calendar terms alone. "
                "All orders are compared on one common sample.",
                "days",
                minimum=0,
            ),
            Key(
                "criterion",
                "str",
                "aic",
                "Information criterion choosing the AR order.",
                choices=("aic", "bic"),
            ),
            Key(
                "order",
                "int",
                None,
                "Fixed AR order instead of choosing one (0 = calendar terms only).",
                "days",
                minimum=0,
            ),
            Key("weekday", "bool", True, "Day-of-week terms."),
            Key(
                "annual",
                "auto_bool",
                "auto",
                "Annual cycle (Fourier terms); auto = on when the history covers 2 years or more.",
            ),
            Key("fourier_pairs", "int", 3, "Sine/cosine pairs for the annual cycle.", minimum=1),
            Key(
                "trend",
                "auto_bool",
                "auto",
                "Linear time trend; auto = when it lowers the information criterion "
                "(criterion) of the one-step model, all orders compared with and without it "
                "on one common sample. Each path draws the trend's coefficient from its "
                "sampling distribution, so its uncertainty widens the later weeks.",
            ),
            Key("holidays", "dates", [], "Public holidays (past and future) as dates."),
            Key(
                "holiday_country",
                "str",
                None,
                "Country code for public holidays from the "
                'holidays package (e.g. "GB"), added to the listed dates.',
            ),
            Key(
                "residuals",
                "str",
                "in_sample",
                "Residuals resampled for the paths: fit "
                "residuals, or out-of-sample errors from the backtest.",
                choices=("in_sample", "backtest"),
            ),
            Key(
                "spread",
                "str",
                "auto",
                "How the paths' day-to-day spread is set: level = resampled residuals "
                "divided by the square root of their fitted level and multiplied by that of "
                "the path's day (variance proportional to the level, as for counts: a quiet "
                "weekend, or the years before a rise, spread less); constant = one spread for "
                "every day; auto = the one whose one-step predictive quantiles score the lower "
                "pinball loss on the backtest's days (ties, or no backtest run: level). Point "
                "forecasts and means are the same either way.",
                choices=("auto", "level", "constant"),
            ),
            Key(
                "refit",
                "bool",
                False,
                "Refit the recursive model on bootstrap series (adds parameter uncertainty).",
            ),
            Key(
                "refit_series",
                "int",
                50,
                "Bootstrap series the recursive model is refitted on with refit = true; "
                "sample path i uses refit i mod this number.",
                "series",
                minimum=1,
            ),
            Key(
                "backtest_origins",
                "int",
                26,
                "Rolling forecast origins in the backtest.",
                minimum=1,
            ),
            Key(
                "backtest_every_days", "int", 7, "Days between backtest origins.", "days", minimum=1
            ),
            Key(
                "backtest_paths",
                "int",
                200,
                "Sample paths per origin and strategy in the backtest (fewer when the run "
                "has fewer paths).",
                "paths",
                minimum=1,
            ),
        ),
    ),
    Table(
        "forecast.level_change",
        "Dated changes in the level of admissions (a new service, a changed catchment). "
        "Inside the history the level after the date is estimated from the days after it, "
        "and its uncertainty is carried into the paths; after the history the paths are "
        "multiplied by 1 + relative_change from the date on.",
        (
            Key(
                "date",
                "date",
                None,
                "First day at the new level; inside the history, at least max_lag (or "
                "order) + the forecast days after its first day.",
                required=True,
            ),
            Key(
                "relative_change",
                "float",
                None,
                "Expected relative change of the level (0.25 = +25%); required for a date "
                "after the history, not used inside it.",
                "fraction",
                above=-1.0,
            ),
        ),
        many=True,
    ),
    Table(
        "demand",
        "Changes to forecast demand.",
        (Key("growth", "float", 0.0, "Relative change on every day (0.05 = +5%).", above=-1.0),),
    ),
    Table(
        "demand.surge",
        "Dated surges multiplying expected admissions.",
        (
            Key("start", "date", None, "First day.", required=True),
            Key("end", "date", None, "Last day (inclusive).", required=True),
            Key("factor", "float", None, "Multiplier (1.2 = +20%).", above=0.0, required=True),
        ),
        many=True,
    ),
    Table(
        "stay",
        "Length of stay.",
        (
            Key(
                "model",
                "str",
                "empirical",
                "Resample the episode stays, fit a family by "
                "maximum likelihood, or the fitted family with the lowest AIC.",
                choices=("empirical", "lognormal", "gamma", "weibull", "exponential", "best"),
            ),
            Key(
                "mean",
                "float",
                None,
                "Mean stay given directly instead of learned from episodes.",
                "days",
                above=0.0,
            ),
            Key("sd", "float", None, "Standard deviation with mean.", "days", above=0.0),
            Key("change_days", "float", 0.0, "Change of the mean stay (e.g. -0.5).", "days"),
            Key("scale", "float", 1.0, "Multiplier on every stay (e.g. 0.9).", above=0.0),
        ),
    ),
    Table(
        "discharge",
        "When patients leave: a stay as a duration, or discharges that follow the calendar "
        "and the clock, learned from the episodes, and levers that change them.",
        (
            Key(
                "timing",
                "str",
                "auto",
                "calendar: the day of stay of each discharge from a hazard by day of stay "
                "with a weekday effect and its clock time from the weekday's discharge hours, "
                "both learned from history.episodes; continuous: a stay drawn as a duration "
                "from the bed time ([stay]); auto: calendar when history.episodes is given and "
                "stay.mean is not, else continuous.",
                choices=("auto", "calendar", "continuous"),
            ),
            Key(
                "earlier_hours",
                "int",
                0,
                "Calendar timing: every discharge this many hours earlier on the same day "
                "(0-23; none before 00:00).",
                "hours",
                minimum=0,
            ),
            Key(
                "before_noon",
                "float",
                0.0,
                "Calendar timing: at least this share (0-1) of each weekday's discharges "
                "before 12:00 (morning hours scaled up together, afternoon down); 0 leaves "
                "the hours as recorded.",
                minimum=0.0,
            ),
            Key(
                "seven_day",
                "float",
                0.0,
                "Calendar timing: the Saturday and Sunday discharge rates moved this share "
                "(0-1) of the way to the weekday rate; 1 discharges as on weekdays.",
                minimum=0.0,
            ),
        ),
    ),
    Table(
        "planned",
        "Planned (elective) admissions booked on a weekly list, simulated beside the "
        "emergency forecast. With a list, the forecast is fitted on emergency admissions only: "
        "map the episodes' admission method (history.columns.method, history.planned_methods, "
        "history.emergency_methods), or give history.admissions counting emergency admissions "
        "only.",
        (
            Key(
                "list",
                "roster",
                None,
                "Planned patients booked each weekday, Monday to Sunday (no planned stream "
                "when neither it nor bookings is given).",
                "patients",
            ),
            Key("admission_time", "hour", "08:00", "When the planned patients arrive."),
            Key(
                "when_full",
                "str",
                "cancel",
                "A planned patient who finds no free bed: cancel (the booking is lost to this "
                "period and counted) or wait (queues first come, first served with emergency "
                "patients, whatever beds.policy says).",
                choices=("cancel", "wait"),
            ),
            Key(
                "stay_mean",
                "float",
                None,
                "Mean stay of planned patients (lognormal with stay_sd); default: learned "
                "from the planned episodes with stay.model.",
                "days",
                above=0.0,
            ),
            Key("stay_sd", "float", None, "Standard deviation with stay_mean.", "days", above=0.0),
            Key(
                "bookings",
                "path",
                None,
                "A file of single bookings (CSV: date YYYY-MM-DD, time HH:MM, optionally "
                "expected_stay in days) admitted at their own times besides the weekly list; "
                "an expected stay rescales the planned stay distribution to that mean.",
            ),
        ),
    ),
    Table(
        "beds",
        "Beds and what happens when none is free.",
        (
            Key(
                "base",
                "int",
                None,
                "Beds normally open. Required (in this file or one it extends): no number of "
                "beds is assumed.",
                "beds",
                minimum=1,
            ),
            Key(
                "policy",
                "str",
                "wait",
                "No free bed: the patient waits (first come, first "
                "served) or is placed elsewhere (diverted, lost to this ward).",
                choices=("wait", "divert"),
            ),
        ),
    ),
    Table(
        "beds.change",
        "Dated changes in beds open: escalation beds (+) or closures (-).",
        (
            Key("start", "date", None, "First day.", required=True),
            Key("end", "date", None, "Last day (inclusive).", required=True),
            Key("change", "int", None, "Beds added (+) or closed (-).", "beds", required=True),
        ),
        many=True,
    ),
    Table(
        "staffing",
        "Registered nurses.",
        (
            Key(
                "minimum_nurses",
                "int",
                2,
                "Fewest registered nurses on any shift.",
                "nurses",
                minimum=1,
            ),
        ),
    ),
    Table(
        "staffing.shift",
        "Shifts of the daily rota; together they must cover the 24 hours "
        "once. Required (in this file or one it extends): no rota is assumed.",
        (
            Key("name", "str", None, "Shift name.", required=True),
            Key("start", "hour", None, "Start time HH:MM.", required=True),
            Key(
                "end",
                "hour",
                None,
                "End time HH:MM (earlier than start = next day).",
                required=True,
            ),
            Key(
                "patients_per_nurse",
                "float",
                None,
                "Patients per registered nurse.",
                "patients",
                above=0.0,
                required=True,
            ),
            Key(
                "roster",
                "roster",
                None,
                "Nurses rostered Monday..Sunday (7 numbers).",
                "nurses",
                required=True,
            ),
        ),
        many=True,
    ),
    Table(
        "staffing.override",
        "Dated changes to the roster of one shift.",
        (
            Key("start", "date", None, "First day.", required=True),
            Key("end", "date", None, "Last day (inclusive).", required=True),
            Key("shift", "str", None, "Shift name.", required=True),
            Key(
                "nurses",
                "int",
                None,
                "Nurses rostered on those days.",
                "nurses",
                minimum=0,
                required=True,
            ),
        ),
        many=True,
    ),
    Table(
        "simulation",
        "How the ward is simulated. Both engines give the same numbers for the same seed; "
        "the fast one works across all paths at once.",
        (
            Key(
                "engine",
                "str",
                "auto",
                "Simulation engine: the SimPy model, the vectorised one, or the fast one "
                "whenever it covers the ward set-up.",
                choices=("auto", "simpy", "fast"),
            ),
        ),
    ),
    Table(
        "sizing",
        "The risk the ward should stay under: `planner size` finds the fewest beds (and "
        "nurses per shift and weekday) that keep it there in every forecast week, and "
        "`planner run` quotes that answer in its headline when the scenario has this table.",
        (
            Key(
                "measure",
                "str",
                "no_bed_week",
                "Risk measure for beds: the chance that at least one patient finds no free "
                "bed in a week, the share of a week's patients who find no free bed, or the "
                "expected hours waited for a bed by a week's patients (policy wait only), or "
                "the chance that at least one planned patient is cancelled in a week (a "
                "[planned] stream with when_full = cancel only).",
                choices=("no_bed_week", "no_bed_share", "wait_hours", "cancelled_week"),
            ),
            Key(
                "target",
                "float",
                None,
                "Largest acceptable value of the measure in every week: a chance or share "
                "(0.05 = 5%, below 1) for no_bed_week, no_bed_share and cancelled_week, hours "
                "for wait_hours "
                "(default: 0.05, or 24 hours for wait_hours).",
                above=0.0,
            ),
            Key(
                "shift_target",
                "float",
                0.05,
                "Largest acceptable chance that a shift is short of registered nurses, for "
                "the roster found for each shift and weekday.",
                "fraction",
                above=0.0,
            ),
        ),
    ),
    Table(
        "costs",
        "Optional unit costs for comparing plans (any currency).",
        (
            Key("bed_day", "float", 0.0, "Per open bed per day.", minimum=0.0),
            Key("nurse_shift", "float", 0.0, "Per rostered nurse shift.", minimum=0.0),
            Key("diverted_patient", "float", 0.0, "Per patient placed elsewhere.", minimum=0.0),
            Key("waiting_hour", "float", 0.0, "Per patient-hour waiting for a bed.", minimum=0.0),
            Key(
                "short_shift",
                "float",
                0.0,
                "Per shift short of registered nurses (for instance the agency cover it needs).",
                minimum=0.0,
            ),
        ),
    ),
)


_KEYS = {key.name: key for key in TOP} | {
    f"{table.name}.{key.name}": key for table in TABLES for key in table.keys
}


def choices(name: str) -> tuple[str, ...]:
    """Allowed values of the key ``name`` ("engine" in [simulation] is "simulation.engine")."""
    return _KEYS[name].choices


def default(name: str) -> Any:
    """Default of the key ``name`` (as in :func:`choices`), for the settings dataclasses, so that
    a default is written once, here. A list default is given as a tuple."""
    value = _KEYS[name].default
    return tuple(value) if isinstance(value, list) else value


def document() -> str:
    """The key reference as Markdown (written to docs/scenario.md)."""
    lines = [
        "# Scenario file keys",
        "",
        "Generated from `planner/schema.py`; "
        "regenerate with `python -m planner.schema > docs/scenario.md`.",
        "",
    ]

    def rows(keys: tuple[Key, ...]) -> list[str]:
        out = ["| key | type | default | unit | meaning |", "|---|---|---|---|---|"]
        for key in keys:
            default = (
                "required" if key.required else ("" if key.default is None else repr(key.default))
            )
            choices = f" One of: {', '.join(key.choices)}." if key.choices else ""
            out.append(
                f"| `{key.name}` | {key.kind} | {default} | {key.unit} | {key.doc}{choices} |"
            )
        return out

    lines += ["## Top level", ""] + rows(TOP) + [""]
    for table in TABLES:
        header = f"[[{table.name}]]" if table.many else f"[{table.name}]"
        lines += [f"## `{header}`", "", table.doc, ""] + rows(table.keys) + [""]
    return "\n".join(lines)


if __name__ == "__main__":  # pragma: no cover
    print(document())

"""How a ward's files are written: their columns, which rows are the ward's, the values that
mean planned and emergency admissions or a patient still on the ward, dates and text."""

from __future__ import annotations

from dataclasses import dataclass

from planner.schema import default

#: The tool's fields of an episode file; a time is either one ``*_at`` column or a date column
#: and a time column (``admitted_date`` with ``admitted_time``).
EPISODE_FIELDS = (
    "admitted_at",
    "discharged_at",
    "admitted_date",
    "admitted_time",
    "discharged_date",
    "discharged_time",
)
#: The tool's fields of a daily counts file.
DAILY_FIELDS = ("date", "admissions")
#: Fields either file may have: the filters' columns, the admission method and a patient id.
OPTIONAL_FIELDS = ("ward", "specialty", "method", "patient")
#: Every field ``history.columns`` may map.
FIELDS = EPISODE_FIELDS + DAILY_FIELDS + OPTIONAL_FIELDS

#: What ``method`` holds in the episodes table.
PLANNED, EMERGENCY = "planned", "emergency"


@dataclass(frozen=True)
class HistoryFormat:
    """How a ward's files are written, and what to do about missing days and about more
    patients on the ward than beds.

    date_format: ``strptime`` format of dates (the daily file's ``date``, separate date
    columns of episodes); None: YYYY-MM-DD.
    timestamp_format: format of the episode file's timestamps (None: ISO 8601).
    fill_missing_days: count days absent from the daily file as 0 admissions (else refuse).
    over_beds: "refuse" or "allow" more patients on the ward at the start than beds open.
    columns: (field, the file's column name) pairs; a field not named here is read from the
    column of its own name.
    wards, specialties: rows kept (by the ward and specialty columns, any case); empty: all.
    planned_methods, emergency_methods: values of the method column meaning a planned
    (elective) or an emergency admission (any case).
    still_on_ward: values of a discharge time meaning the patient is still on the ward.
    encoding: the files' text encoding (None: UTF-8, else Windows-1252).
    episodes_sheet, admissions_sheet: the sheet of a workbook, by name or number from 1
    (None: the only sheet).
    """

    date_format: str | None = None
    timestamp_format: str | None = None
    fill_missing_days: bool = False
    over_beds: str = default("history.over_beds")
    columns: tuple[tuple[str, str], ...] = ()
    wards: tuple[str, ...] = ()
    specialties: tuple[str, ...] = ()
    planned_methods: tuple[str, ...] = ()
    emergency_methods: tuple[str, ...] = ()
    still_on_ward: tuple[str, ...] = default("history.still_on_ward")
    encoding: str | None = None
    episodes_sheet: str | int | None = None
    admissions_sheet: str | int | None = None

    def column(self, field: str) -> str | None:
        """The file's column mapped to ``field``, or None (the field's own name)."""
        return dict(self.columns).get(field)

    @property
    def reads_methods(self) -> bool:
        """Whether the scenario says which methods are planned and which emergency."""
        return bool(self.planned_methods or self.emergency_methods)

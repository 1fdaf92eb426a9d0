"""A hospital: wards simulated together, and the rules for placing patients between them.

Each ward is a :class:`planner.simulate.model.WardModel` (its beds over time, overflow policy,
rota, stays, discharge timing, planned list, patients on the ward at the start), and
:class:`Outlying` says which wards may take which ward's patients. Both engines follow these
rules, per path, in hours since 00:00 of the first day:

Arrival of a patient whose home ward is w, at time t:
1. a free bed on w (occupied < beds open): the patient takes it;
2. else a planned patient is cancelled (w's ``when_full = "cancel"``) or waits in w's queue;
3. else an emergency patient goes to the first ward of w's outlying list with a free bed, as
   an outlier (the stay, drawn for the patient, starts there);
4. else w's policy: "wait" puts the patient in w's queue (at the front door), "divert"
   places the patient outside the hospital.

A bed that frees on ward v (a discharge, or an outlier moving back home), at time t:
1. if v has more patients than beds open (beds were closed), the bed closes;
2. else it goes to the head of v's queue;
3. else to the longest-waiting emergency patient at the head of the queue of a ward that lists
   v for outlying (earliest arrival; equal arrivals: the ward listed first in the hospital);
4. else, with ``move_back``, to v's own patient who has been outlying longest, if placed less
   than ``move_back_hours`` ago: the patient moves home and the bed left on the host ward frees
   in turn (these rules again, for the host ward);
5. else it stays free.
At 00:00 the day's beds open take effect; then each ward in the hospital's order fills its
free beds by rules 2-4 of a freed bed.

Counting: a patient's arrival, wait and diversion belong to the home ward; census, bed
admissions, discharges and shift peaks to the ward whose bed it is; a moved patient is neither
discharged nor admitted again (``moved_back`` on the home ward, ``moved_out`` on the host).
An outlier's stay and discharge time are drawn for the patient as on the home ward (calendar
discharges follow the home ward's pattern); outlying does not change them.

Every admission is, at every moment, in exactly one ward's bed, waiting, diverted, cancelled
or discharged.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace

from planner.errors import PlannerError
from planner.simulate.model import WardModel


@dataclass(frozen=True)
class Outlying:
    """``hosts``: for each ward, in the hospital's order, the wards (positions) that may take
    its emergency patients when it has no free bed, in the order tried; ``move_back``: an
    outlier moves home when a home bed frees; ``move_back_hours``: only if placed less than
    this many hours ago (inf: always)."""

    hosts: tuple[tuple[int, ...], ...]
    move_back: bool = False
    move_back_hours: float = math.inf

    def __post_init__(self) -> None:
        wards = len(self.hosts)
        for w, listed in enumerate(self.hosts):
            if len(set(listed)) != len(listed):
                raise PlannerError(f"outlying: ward {w + 1} lists a ward twice")
            for h in listed:
                if not 0 <= h < wards or h == w:
                    raise PlannerError(f"outlying: ward {w + 1} lists an unknown ward or itself")
        if not self.move_back_hours > 0:
            raise PlannerError(
                f"outlying.move_back_hours must be > 0, got {self.move_back_hours!r}"
            )

    @classmethod
    def none(cls, wards: int) -> Outlying:
        """No outlying between ``wards`` wards."""
        return cls(hosts=((),) * wards)

    def linked(self) -> bool:
        """Whether any ward may place patients on another."""
        return any(self.hosts)


@dataclass(frozen=True, eq=False)
class HospitalModel:
    """The simulated hospital: ``names`` and ``wards`` in the hospital's order (every ward
    starts on the same day), and the ``outlying`` rules between them."""

    names: tuple[str, ...]
    wards: tuple[WardModel, ...]
    outlying: Outlying = field(default=None)  # type: ignore[assignment]

    def __post_init__(self) -> None:
        if not self.wards or len(self.names) != len(self.wards):
            raise PlannerError("hospital: need one name per ward, and at least one ward")
        if len(set(self.names)) != len(self.names):
            raise PlannerError("hospital: two wards have the same name")
        starts = {ward.start for ward in self.wards}
        if len(starts) > 1:
            raise PlannerError(
                "hospital: the wards' simulations start on different days "
                f"({', '.join(sorted(str(day) for day in starts))}); histories must end together"
            )
        outlying = self.outlying or Outlying.none(len(self.wards))
        if len(outlying.hosts) != len(self.wards):
            raise PlannerError("outlying: need one list of outlying wards per ward")
        object.__setattr__(self, "outlying", outlying)

    @property
    def start(self):
        return self.wards[0].start

    def with_wards(self, wards: tuple[WardModel, ...]) -> HospitalModel:
        """The same hospital with other ward models (beds, rota) in the same order."""
        return replace(self, wards=tuple(wards))

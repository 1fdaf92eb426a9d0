"""The SimPy hospital model's state: patients, wards and the dispatcher of one path.

:class:`Path` holds each ward's beds (a ``simpy.PriorityResource``, with closure requests going
first: rule 1 of a freed bed), queues and outliers, and applies the rules of
:mod:`planner.hospital.model` when a patient arrives (:meth:`Path.arrive`) and when a bed frees
(:meth:`Path.bed_freed`); the processes that drive it are in :mod:`planner.hospital.simpy_model`.
"""

from __future__ import annotations

from collections import deque

import numpy as np
import simpy

from planner.hospital.model import HospitalModel
from planner.hospital.result import COUNTED

#: Request priorities: a closure goes before every patient.
CLOSURE, PATIENT = 0, 1
ROW = {name: i for i, name in enumerate(COUNTED)}


class Patient:
    """A patient: home ward, arrival hour, planned or not, number in the block's inputs; its
    bed (ward, request); the event calling it from a queue; when it got a bed from the queue,
    was placed as an outlier and stopped outlying."""

    def __init__(self, home: int, arrival: float, planned: bool, number: int):
        self.home, self.arrival, self.planned, self.number = home, arrival, planned, number
        self.ward, self.bed, self.called = -1, None, None
        self.bed_hour = self.placed_at = self.ended = None


class Level:
    """A count over time (patients in beds, outliers hosted, patients waiting) and its log."""

    def __init__(self, start: int):
        self.now, self.hours, self.levels = start, [-1.0], [start]

    def change(self, hour: float, by: int) -> None:
        self.now += by
        self.hours.append(hour)
        self.levels.append(self.now)

    def read(self, boundaries: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """The count just before each boundary, and the most in each interval between two (a
        change exactly at a boundary counts in the interval it starts)."""
        levels = np.array(self.levels)
        last = np.searchsorted(self.hours, boundaries, side="left") - 1
        most = [levels[a : b + 1].max() for a, b in zip(last[:-1], last[1:], strict=True)]
        return levels[last], np.array(most)


class Ward:
    """One ward of a path: its beds (a resource, with its closures), its queue (first come,
    first served), everyone who joined it, its own outliers in the order placed (all, and
    those who may still move home) and its logs."""

    def __init__(self, env: simpy.Environment, beds_open: np.ndarray, inpatients: int):
        self.capacity = max(int(beds_open.max()), inpatients, 1)
        self.beds = simpy.PriorityResource(env, self.capacity)
        self.closures: list = []
        self.queue, self.waited, self.placed, self.outlying = deque(), [], [], deque()
        self.occupied, self.hosted, self.waiting = Level(inpatients), Level(0), Level(0)

    def free(self) -> bool:
        """A bed is free: patients and closures (granted or waiting) leave room."""
        return len(self.beds.users) + len(self.beds.queue) < self.capacity


class Path:
    """One path's wards and the dispatcher: the arrival rules and rules 1-5 of a freed bed
    (:mod:`planner.hospital.model`), plain functions acting at the current time."""

    def __init__(self, env, model: HospitalModel, beds: np.ndarray, inpatients, records):
        self.env, (self.counts, self.between), self.hosts = env, records, model.outlying.hosts
        self.wards = [Ward(env, beds[w], int(inpatients[w])) for w in range(len(model.wards))]
        self.takers = [[u for u, listed in enumerate(self.hosts) if v in listed]
                       for v in range(len(self.wards))]  # fmt: skip
        self.move_back, self.limit = model.outlying.move_back, model.outlying.move_back_hours
        self.wait = [m.settings.policy == "wait" for m in model.wards]
        self.cancel = [m.planned is not None and m.planned.when_full == "cancel"
                       for m in model.wards]  # fmt: skip

    def count(self, name: str, w: int) -> None:
        self.counts[w, int(self.env.now // 24.0), ROW[name]] += 1

    def take_bed(self, patient: Patient, v: int) -> None:
        """``patient`` is given a bed on ward ``v`` now (an outlier if not its home ward)."""
        now, ward, u = self.env.now, self.wards[v], patient.home
        self.count("bed_admissions", v)
        if patient.planned:
            self.count("planned_admissions", v)
        patient.ward, patient.bed = v, ward.beds.request(PATIENT)
        ward.occupied.change(now, 1)
        if v != u:
            self.count("outliers_placed", u)
            self.count("outliers_hosted", v)
            self.between[u, v] += 1
            ward.hosted.change(now, 1)
            patient.placed_at = now
            self.wards[u].placed.append(patient)
            self.wards[u].outlying.append(patient)

    def arrive(self, patient: Patient) -> bool:
        """The arrival rules; False when the patient is cancelled or diverted."""
        u, home = patient.home, self.wards[patient.home]
        if home.free():  # 1. a free bed at home
            self.count("admissions", u)
            self.take_bed(patient, u)
            return True
        if patient.planned and self.cancel[u]:  # 2. a planned patient is cancelled ...
            self.count("cancelled", u)
            if home.hosted.now > 0:
                self.count("cancelled_with_outliers", u)
            return False
        self.count("admissions", u)
        for v in () if patient.planned else self.hosts[u]:  # 3. the first outlying ward free
            if self.wards[v].free():
                self.take_bed(patient, v)
                return True
        if self.wait[u] or patient.planned:  # 2 and 4: waits
            self.count("waited", u)
            patient.called = self.env.event()
            home.queue.append(patient)
            home.waited.append(patient)
            home.waiting.change(self.env.now, 1)
            return True
        self.count("diverted", u)  # 4. placed outside the hospital
        return False

    def next_waiting(self, v: int) -> Patient | None:
        """Rules 2-3: the head of v's queue, else the longest-waiting emergency patient at the
        head of a queue of a ward that lists v (equal arrivals: the ward listed first)."""
        if self.wards[v].queue:
            return self.wards[v].queue[0]
        heads = [self.wards[u].queue[0] for u in self.takers[v] if self.wards[u].queue]
        emergency = [head for head in heads if not head.planned]
        return min(emergency, key=lambda head: head.arrival, default=None)

    def mover(self, v: int) -> Patient | None:
        """Rule 4: v's own patient outlying longest of those placed less than the limit ago."""
        outlying = self.wards[v].outlying
        while self.move_back and outlying:
            first = outlying[0]
            if first.ward not in (-1, v) and first.placed_at > self.env.now - self.limit:
                return first
            outlying.popleft()  # gone, moved home or placed too long ago: never again
        return None

    def bed_freed(self, v: int) -> None:
        """Rules 1-5 for a bed that freed on ward ``v`` (its occupant gone)."""
        while self.wards[v].free():  # else 1: a closure waits and takes the bed
            waiting = self.next_waiting(v)
            if waiting is not None:  # 2-3: the patient called leaves its queue
                home = self.wards[waiting.home]
                home.queue.popleft()
                home.waiting.change(self.env.now, -1)
                waiting.bed_hour = self.env.now
                self.take_bed(waiting, v)
                waiting.called.succeed()
                return
            patient = self.mover(v)
            if patient is None:  # 5. the bed stays free
                return
            host = self.vacate(patient)  # 4: moves home; the host's bed frees in turn
            self.count("moved_out", host)
            self.count("moved_back", v)
            self.wards[v].outlying.popleft()
            patient.ward, patient.bed = v, self.wards[v].beds.request(PATIENT)
            self.wards[v].occupied.change(self.env.now, 1)
            v = host

    def vacate(self, patient: Patient) -> int:
        """``patient`` leaves its bed (an outlier's placement ends); returns the ward."""
        v, ward = patient.ward, self.wards[patient.ward]
        if patient.bed.triggered:
            ward.beds.release(patient.bed)
        else:  # still behind a closure that takes a bed freed at this instant
            patient.bed.cancel()
        ward.occupied.change(self.env.now, -1)
        if v != patient.home:
            ward.hosted.change(self.env.now, -1)
            patient.ended = self.env.now
        patient.ward = -1
        return v

    def leave(self, patient: Patient) -> None:
        """``patient`` is discharged; the bed frees."""
        self.count("discharges", patient.ward)
        self.bed_freed(self.vacate(patient))

"""Equalizing and watering planner: plain data in, a Plan out; no Django, no database.

The Django side builds `PlanInputs` from the database (it drops sealed batteries whose profile
forbids equalizing, and precomputes each battery's equalizing airflow with
`chemistry.ventilation_airflow_m3h`), calls `plan_care(inputs)`, and shows or exports the `Plan`.
`check_limits(plan, inputs)` re-checks every hard limit independently of the planner.

Model
-----
* Days are numbered 0 .. days-1 from `start_date`. Each day has the site's shift windows; a slot
  is (day, window). Windows may not overlap (checked), so "per slot" and "at the same instant"
  are the same thing. An equalizing charge starts at the start of a window at least
  `equalize_hours` long and holds one equalize-capable charger in the battery's charging room
  until `start + equalize_hours`; the battery is off its truck for that time.
* Hard limits, per room and slot: equalizing charges <= equalize-capable chargers, and
  baseline airflow + the sum of the equalizing batteries' airflow <= the room's airflow; per site
  and slot: batteries off their trucks for equalizing <= spares_available - spares_reserve;
  per day: waterings <= waterings_per_day (None = no limit).
* A task is due on a day (fleetcare.planner.due: the earliest of its interval since the last one, its
  charge count, today if a finding is open). It is never planned before its due day. Overdue battery-days of a
  placed task = max(0, planned day - due day); a task that finds no slot is unplaced and counts
  days - due (that is, overdue through the horizon end + 1).
* Repeat tasks: the next one is due interval days after the day the previous one is planned, so
  lateness never carries over to the next one.
* Objective: minimise total overdue battery-days; among plans with equal total, minimise the
  sum of severity x day (severe findings first); then serial, for determinism (see Ties).

What is optimal and what is a heuristic
---------------------------------------
Earliest-due-first (EDD) slot by slot is optimal when every slot has one count limit and every
task fits every slot. Here it is not: (a) rooms share the site's spare batteries, and EDD fills
that limit with the room whose tasks are due first while the other room's chargers stand idle
(`test_it_beats_earliest_due_first_when_rooms_share_spares`: EDD 8 overdue days, optimum 6);
(b) the airflow limit is a knapsack, batteries needing different airflow; (c) a long equalizing
charge fits only the long windows. So equalizing is solved in *waves*:

1. Wave 1 is the first equalizing charge of every battery, solved **exactly**. EDD first: if it
   puts every task on the earliest day that task could have on its own, that is its proof.
   Otherwise a 0-1 time-indexed assignment program (per room-slot charger and airflow rows, per
   site-slot spares rows) goes to HiGHS (`scipy.optimize.milp`). Airflow rows that the charger
   count already implies are left out; without airflow rows the matrix is a network matrix and
   the relaxation is integral, so most waves solve at the root. Optimality of the overdue days
   is proven from HiGHS's dual bound (its own "optimal" status only means "within the gap").
2. Each later wave holds the repeat charges the previous wave created, solved the same way on
   the capacity left over. The result is compared with one chronological EDD pass that adds
   repeats as it places charges, and the better plan is kept.

Waves are a **heuristic** once repeats fall inside the horizon (an earlier wave may take a slot a
later one needed; on very busy sites the chronological pass sometimes wins). But the wave-1
optimum is a **lower bound** for every plan: any plan's first charges are a feasible wave 1, and
repeats only add overdue days. The plan reports `lower_bound_overdue_days`, and `proven_optimal`
is True exactly when the plan meets it. Hence: when nothing repeats inside the horizon (the
single-occurrence case), the plan is optimal and proven so, unless the solver's time budget runs
out first; the tests check this against exhaustive search on small sites. With repeats, the plan is optimal when it meets the bound (one weekly
battery in four weeks does) and otherwise within the reported gap.

Ties: the severity term (severity x day, weighted below one overdue day) makes severe findings go
first among plans with equal overdue days; the solver may stop once the overdue days are proven,
so that tie-break is exact for EDD and best effort for the solver. Serial orders EDD; when EDD and
the solver tie, EDD's plan is kept; when the solver wins, equal-cost plans are not ordered by serial.

Solver time: `plan_care(inputs, solver_seconds=10)` caps HiGHS for the whole plan. Measured on
random 200-battery, 28-day, 4-room sites: about 0.1 s with EDD alone, usually 0.5-3 s with the
solver; sites with far more work than chargers can use the whole budget on wave 1, and the
remaining waves then use EDD (not proven). The plan is deterministic for given inputs whenever
the solver finishes within the budget; if the budget runs out, the plan can depend on machine
speed. Input order never matters (batteries are sorted by serial first).

Watering has one limit, crew capacity per day, and unit-size tasks never planned before they are
due: doing as many as the crew can each day, earliest due first, finishes the most tasks by every
day and so is optimal for first waterings. With repeats it is a heuristic, bounded and flagged
the same way.

Every solver plan is re-checked with the same limit tests as `check_limits` before use, and EDD
only places a task where it fits, so every plan returned respects every hard limit.

Times are naive local times at the site; the caller attaches the site's time zone.
Watering is put right after the battery's equalizing charge that day, else at the end of the
day's first shift window ("water after charging": field notes, common practice).
"""

from __future__ import annotations

import math
from collections import defaultdict
from collections.abc import Hashable, Sequence
from dataclasses import dataclass
from datetime import date, datetime, time, timedelta
from time import monotonic

import numpy as np
from scipy.optimize import Bounds, LinearConstraint, milp
from scipy.sparse import coo_matrix

from fleetcare.planner import due
from fleetcare.words import count

__all__ = [
    "EQUALIZE",
    "WATER",
    "BatteryCare",
    "DailyWindow",
    "FindingInput",
    "Plan",
    "PlanInputs",
    "PlannedTask",
    "RoomLimits",
    "UnplacedTask",
    "Violation",
    "check_limits",
    "plan_care",
]

EQUALIZE = due.EQUALIZE
WATER = due.WATER
EQUALIZE_FINDINGS = {"high_spread": "high-spread", "sulfation": "sulfation"}
WATER_FINDINGS = {"low_level": "low electrolyte level"}
# A finding's level as its page names it (care.models.Finding.Severity); a warning goes unsaid.
_FINDING_LEVELS = {1: "note: ", 3: "urgent "}
MAX_HORIZON_DAYS = 28
SOLVER_SECONDS = 10.0
_RELATIVE_TOLERANCE = 1e-9


@dataclass(frozen=True)
class DailyWindow:
    """A time each day when batteries may be off their trucks: starts at `start`, lasts `hours`."""

    start: time
    hours: float


@dataclass(frozen=True)
class RoomLimits:
    """A charging room's limits: equalize-capable chargers and the airflow its ventilation moves."""

    room_id: Hashable
    equalize_chargers: int
    airflow_m3h: float
    baseline_airflow_m3h: float = 0.0
    name: str = ""

    @property
    def label(self) -> str:
        return self.name or f"room {self.room_id}"

    @property
    def free_airflow_m3h(self) -> float:
        return self.airflow_m3h - self.baseline_airflow_m3h


@dataclass(frozen=True)
class FindingInput:
    """An open finding that asks for care today: high_spread or sulfation (equalize), low_level (water)."""

    kind: str
    severity: int = 1
    note: str = ""

    def __post_init__(self):
        if self.kind not in EQUALIZE_FINDINGS and self.kind not in WATER_FINDINGS:
            raise ValueError(f"unknown finding kind {self.kind!r}")
        if self.severity < 0:
            raise ValueError("severity must be >= 0")


@dataclass(frozen=True)
class BatteryCare:
    """One battery as the planner sees it. Intervals of None mean "not periodic"."""

    battery_id: Hashable
    serial: str
    room_id: Hashable | None
    airflow_m3h: float
    equalize_hours: float
    equalize_every_days: int | None = 7
    equalize_every_charges: int | None = None
    charges_per_day: float = 1.0
    charges_since_equalize: int = 0
    last_equalized: date | None = None
    water_every_days: int | None = 7
    last_watered: date | None = None
    watering_minutes: float = 15.0
    findings: tuple[FindingInput, ...] = ()
    in_service: date | None = None  # intervals count from here while nothing is on record

    def __post_init__(self):
        object.__setattr__(self, "findings", tuple(self.findings))
        for name in ("equalize_every_days", "equalize_every_charges", "water_every_days"):
            value = getattr(self, name)
            if value is not None and value < 1:
                raise ValueError(f"{name} must be >= 1 or None")
        if self.equalize_hours <= 0 or self.airflow_m3h < 0 or self.charges_per_day <= 0:
            raise ValueError(f"battery {self.serial}: equalize_hours and charges_per_day must be > 0, airflow >= 0")

    def equalize_interval_days(self) -> int | None:
        return due.equalize_interval_days(self.equalize_every_days, self.equalize_every_charges, self.charges_per_day)


WindowLike = DailyWindow | tuple


@dataclass(frozen=True)
class PlanInputs:
    """Everything the planner needs for one site.

    `shift_windows` takes DailyWindow or (start, hours) with start a `time` or "HH:MM".
    """

    site_id: Hashable
    start_date: date
    days: int
    shift_windows: tuple[WindowLike, ...]
    rooms: tuple[RoomLimits, ...]
    batteries: tuple[BatteryCare, ...]
    spares_available: int
    spares_reserve: int = 0
    waterings_per_day: int | None = None

    def __post_init__(self):
        windows = tuple(sorted((_as_window(w) for w in self.shift_windows), key=lambda w: w.start))
        object.__setattr__(self, "shift_windows", windows)
        object.__setattr__(self, "rooms", tuple(self.rooms))
        object.__setattr__(self, "batteries", tuple(self.batteries))
        if not 1 <= self.days <= MAX_HORIZON_DAYS:
            raise ValueError(f"days must be 1..{MAX_HORIZON_DAYS}")
        if not windows:
            raise ValueError("at least one shift window is needed")
        _check_windows_do_not_overlap(windows)
        if len({r.room_id for r in self.rooms}) != len(self.rooms):
            raise ValueError("room ids must be unique")
        if len({b.battery_id for b in self.batteries}) != len(self.batteries):
            raise ValueError("battery ids must be unique")
        if self.waterings_per_day is not None and self.waterings_per_day < 0:
            raise ValueError("waterings_per_day must be >= 0 or None")

    @property
    def spare_capacity(self) -> int:
        return self.spares_available - self.spares_reserve

    def day(self, index: int) -> date:
        return self.start_date + timedelta(days=index)


def _as_window(window: WindowLike) -> DailyWindow:
    if isinstance(window, DailyWindow):
        return window
    start, hours = window
    if isinstance(start, str):
        start = time.fromisoformat(start)
    return DailyWindow(start=start, hours=float(hours))


def _check_windows_do_not_overlap(windows: Sequence[DailyWindow]) -> None:
    if any(not 0 < w.hours <= 24 for w in windows):
        raise ValueError("shift window hours must be in (0, 24]")
    minutes = [(w.start.hour * 60 + w.start.minute, w.hours * 60) for w in windows]
    for i, (start, length) in enumerate(minutes):
        next_start = minutes[(i + 1) % len(minutes)][0] + (24 * 60 if i + 1 == len(minutes) else 0)
        if start + length > next_start + 1e-9:
            raise ValueError("shift windows overlap")


@dataclass(frozen=True)
class PlannedTask:
    battery_id: Hashable
    serial: str
    kind: str
    room_id: Hashable | None
    day: date
    start: datetime
    end: datetime
    due_day: date
    days_overdue: int
    severity: int
    reason: str

    def to_json_dict(self) -> dict:
        return {
            "battery_id": self.battery_id,
            "serial": self.serial,
            "kind": self.kind,
            "room_id": self.room_id,
            "day": self.day.isoformat(),
            "start": self.start.isoformat(),
            "end": self.end.isoformat(),
            "due_day": self.due_day.isoformat(),
            "days_overdue": self.days_overdue,
            "severity": self.severity,
            "reason": self.reason,
        }


@dataclass(frozen=True)
class UnplacedTask:
    battery_id: Hashable
    serial: str
    kind: str
    room_id: Hashable | None
    due_day: date
    days_overdue: int
    severity: int
    reason: str

    def to_json_dict(self) -> dict:
        return {
            "battery_id": self.battery_id,
            "serial": self.serial,
            "kind": self.kind,
            "room_id": self.room_id,
            "due_day": self.due_day.isoformat(),
            "days_overdue": self.days_overdue,
            "severity": self.severity,
            "reason": self.reason,
        }


@dataclass(frozen=True)
class Plan:
    site_id: Hashable
    start_date: date
    days: int
    tasks: tuple[PlannedTask, ...]
    unplaced: tuple[UnplacedTask, ...]
    lower_bound_overdue_days: int
    proven_optimal: bool
    method: str

    @property
    def total_overdue_days(self) -> int:
        return sum(t.days_overdue for t in self.tasks) + sum(u.days_overdue for u in self.unplaced)

    def for_day(self, day: date) -> list[PlannedTask]:
        return [t for t in self.tasks if t.day == day]

    def to_json_dict(self) -> dict:
        return {
            "site_id": self.site_id,
            "start_date": self.start_date.isoformat(),
            "days": self.days,
            "total_overdue_days": self.total_overdue_days,
            "lower_bound_overdue_days": self.lower_bound_overdue_days,
            "proven_optimal": self.proven_optimal,
            "method": self.method,
            "tasks": [t.to_json_dict() for t in self.tasks],
            "unplaced": [u.to_json_dict() for u in self.unplaced],
        }


@dataclass(frozen=True)
class Violation:
    limit: str
    message: str

    def __str__(self) -> str:
        return f"{self.limit}: {self.message}"


def plan_care(inputs: PlanInputs, solver_seconds: float = SOLVER_SECONDS) -> Plan:
    """Plan equalizing and watering; `solver_seconds` caps the search for a better order over the whole plan."""
    grid = _Grid(inputs)
    equalizing = _plan_equalizing(grid, solver_seconds)
    watering = _plan_watering(grid, equalizing.placed)
    tasks = sorted(
        [_equalize_task(grid, need, slot, equalizing.load) for need, slot in equalizing.placed]
        + [_water_task(grid, need, day, equalizing.placed) for need, day in watering.placed],
        key=lambda t: (t.start, t.kind, _room_key(t.room_id), t.serial, str(t.battery_id)),
    )
    unplaced = sorted(
        [_unplaced(grid, need, reason) for need, reason in equalizing.unplaced + watering.unplaced],
        key=lambda u: (u.due_day, -u.severity, u.kind, u.serial, str(u.battery_id)),
    )
    return Plan(
        site_id=inputs.site_id,
        start_date=inputs.start_date,
        days=inputs.days,
        tasks=tuple(tasks),
        unplaced=tuple(unplaced),
        lower_bound_overdue_days=equalizing.lower_bound + watering.lower_bound,
        proven_optimal=equalizing.proven_optimal and watering.proven_optimal,
        method=f"equalizing: {equalizing.method}; watering: {watering.method}",
    )


def check_limits(plan: Plan, inputs: PlanInputs) -> list[Violation]:
    """Every hard limit the plan breaks; empty when the plan is feasible."""
    batteries = {b.battery_id: b for b in inputs.batteries}
    rooms = {r.room_id: r for r in inputs.rooms}
    horizon = {inputs.day(d) for d in range(inputs.days)}
    violations = []
    equalizing = []
    for task in plan.tasks:
        battery = batteries.get(task.battery_id)
        if battery is None:
            violations.append(Violation("unknown battery", f"{task.serial} is not in the inputs"))
            continue
        if task.day not in horizon:
            violations.append(Violation("horizon", f"{task.serial} {task.kind} on {task.day} is outside the plan"))
        if task.kind == EQUALIZE:
            equalizing.append((task, battery))
            violations.extend(_equalize_placement_violations(task, battery, rooms, inputs))
    for room_id, room_tasks in _group(equalizing, key=lambda tb: tb[0].room_id).items():
        room = rooms.get(room_id)
        if room is None:
            continue
        for instant, running in _running_at_each_start(room_tasks):
            if len(running) > room.equalize_chargers:
                violations.append(
                    Violation(
                        "chargers",
                        f"{room.label} at {instant:%Y-%m-%d %H:%M}: {len(running)} equalizing charges, "
                        f"{room.equalize_chargers} equalize-capable chargers",
                    )
                )
            airflow = room.baseline_airflow_m3h + sum(b.airflow_m3h for _, b in running)
            if not _fits(airflow, room.airflow_m3h):
                violations.append(
                    Violation(
                        "airflow",
                        f"{room.label} at {instant:%Y-%m-%d %H:%M}: needs {airflow:.1f} m3/h, "
                        f"ventilation gives {room.airflow_m3h:.1f} m3/h",
                    )
                )
    for instant, running in _running_at_each_start(equalizing):
        if len(running) > max(0, inputs.spare_capacity):
            violations.append(
                Violation(
                    "spares",
                    f"site at {instant:%Y-%m-%d %H:%M}: {len(running)} batteries off their trucks for equalizing, "
                    f"{inputs.spares_available} spares minus {inputs.spares_reserve} kept for shift change",
                )
            )
        serials = [t.serial for t, _ in running]
        if len({t.battery_id for t, _ in running}) < len(running):
            violations.append(Violation("double booking", f"a battery equalizes twice at once: {sorted(serials)}"))
    if inputs.waterings_per_day is not None:
        waterings = _group([t for t in plan.tasks if t.kind == WATER], key=lambda t: t.day)
        for day, day_tasks in sorted(waterings.items()):
            if len(day_tasks) > inputs.waterings_per_day:
                violations.append(
                    Violation(
                        "watering capacity",
                        f"{day}: {len(day_tasks)} waterings, crew can do {inputs.waterings_per_day}",
                    )
                )
    return violations


def _equalize_placement_violations(task, battery, rooms, inputs) -> list[Violation]:
    found = []
    if task.room_id != battery.room_id or task.room_id not in rooms:
        found.append(Violation("room", f"{task.serial} equalizes in {task.room_id!r}, not its charging room"))
    if task.end - task.start < timedelta(hours=battery.equalize_hours) - timedelta(seconds=1):
        found.append(Violation("duration", f"{task.serial} equalizing shorter than {battery.equalize_hours} h"))
    in_a_window = any(
        datetime.combine(task.day, w.start) <= task.start
        and task.end <= datetime.combine(task.day, w.start) + timedelta(hours=w.hours)
        for w in inputs.shift_windows
    )
    if not in_a_window:
        found.append(
            Violation(
                "shift window", f"{task.serial} equalizing {task.start}..{task.end} is outside every shift window"
            )
        )
    return found


def _running_at_each_start(pairs):
    """For each distinct start instant: the (task, battery) pairs equalizing at that instant."""
    for instant in sorted({t.start for t, _ in pairs}):
        yield instant, [(t, b) for t, b in pairs if t.start <= instant < t.end]


def _group(items, key) -> dict:
    grouped = defaultdict(list)
    for item in items:
        grouped[key(item)].append(item)
    return grouped


def _fits(total: float, capacity: float) -> bool:
    return total <= capacity + _RELATIVE_TOLERANCE * max(1.0, abs(capacity))


def _room_key(room_id) -> tuple:
    return (room_id is None, str(room_id))


# --- What is due ------------------------------------------------------------------------------


@dataclass(frozen=True)
class _Need:
    battery: int  # index into _Grid.batteries (sorted by serial)
    kind: str
    due: int  # day index, negative when already overdue at the start
    severity: int
    why: str

    @property
    def release(self) -> int:
        return max(0, self.due)


def _first_equalize(grid: _Grid, index: int) -> _Need | None:
    b = grid.batteries[index]
    triggers = due.equalize_triggers(grid.start, b.last_equalized, b.in_service, b.equalize_every_days,
                                     b.equalize_every_charges, b.charges_since_equalize, b.charges_per_day)
    return _need_from(grid, index, EQUALIZE, [((t.day - grid.start).days, t.why) for t in triggers], EQUALIZE_FINDINGS)


def _first_watering(grid: _Grid, index: int) -> _Need | None:
    b = grid.batteries[index]
    triggers = due.water_triggers(grid.start, b.last_watered, b.in_service, b.water_every_days)
    return _need_from(grid, index, WATER, [((t.day - grid.start).days, t.why) for t in triggers], WATER_FINDINGS)


def _need_from(grid, index, kind, triggers, finding_labels) -> _Need | None:
    findings = [f for f in grid.batteries[index].findings if f.kind in finding_labels]
    for finding in findings:
        note = f": {finding.note}" if finding.note else ""
        level = _FINDING_LEVELS.get(finding.severity, "")
        triggers.append((0, f"{level}{finding_labels[finding.kind]} finding{note}"))
    if not triggers:
        return None
    due = min(d for d, _ in triggers)
    if due >= grid.days:
        return None
    why = "; ".join(text for d, text in sorted(triggers, key=lambda t: t[0]) if d < grid.days)
    return _Need(index, kind, due, max((f.severity for f in findings), default=0), why)


def _follow_up(grid: _Grid, need: _Need, day: int) -> _Need | None:
    battery = grid.batteries[need.battery]
    if need.kind == EQUALIZE:
        interval = battery.equalize_interval_days()
    else:
        interval = battery.water_every_days
    if interval is None or day + interval >= grid.days:
        return None
    return _Need(
        need.battery, need.kind, day + interval, 0, f"every {count(interval, 'day')} after the one planned for {grid.day(day)}"
    )


# --- Slots and load ---------------------------------------------------------------------------


class _Grid:
    """The horizon's slots, the limits per slot, and the inputs by index."""

    def __init__(self, inputs: PlanInputs):
        self.inputs = inputs
        self.start = inputs.start_date
        self.days = inputs.days
        self.windows = inputs.shift_windows
        self.slots_per_day = len(self.windows)
        self.slot_count = self.days * self.slots_per_day
        self.batteries = tuple(sorted(inputs.batteries, key=lambda b: (b.serial, str(b.battery_id))))
        self.rooms = {r.room_id: r for r in inputs.rooms}
        self.spare_capacity = max(0, inputs.spare_capacity)
        self.order = {i: (b.serial, str(b.battery_id)) for i, b in enumerate(self.batteries)}

    def day(self, index: int) -> date:
        return self.inputs.day(index)

    def day_of(self, slot: int) -> int:
        return slot // self.slots_per_day

    def window_of(self, slot: int) -> DailyWindow:
        return self.windows[slot % self.slots_per_day]

    def priority(self, need: _Need) -> tuple:
        return (need.due, -need.severity, self.order[need.battery])

    def room_of(self, need: _Need) -> RoomLimits | None:
        return self.rooms.get(self.batteries[need.battery].room_id)

    def slots_from(self, need: _Need, first_day: int, last_day: int | None = None):
        """Slots whose window is long enough for the battery's equalizing charge, in time order."""
        hours = self.batteries[need.battery].equalize_hours
        last = self.days if last_day is None else last_day
        for day in range(first_day, last):
            for w, window in enumerate(self.windows):
                if hours <= window.hours + 1e-9:
                    yield day * self.slots_per_day + w

    def never_fits(self, need: _Need) -> str | None:
        """Why this equalizing charge could not go in any slot even in an empty plan, or None."""
        battery = self.batteries[need.battery]
        room = self.room_of(need)
        if battery.room_id is None:
            return "no charging room recorded for this battery"
        if room is None:
            return f"charging room {battery.room_id!r} is not among the plan's rooms"
        if room.equalize_chargers < 1:
            return f"{room.label} has no equalize-capable charger"
        longest = max(w.hours for w in self.windows)
        if battery.equalize_hours > longest + 1e-9:
            return f"needs {battery.equalize_hours:g} h of equalizing; the longest shift window is {longest:g} h"
        if not _fits(room.baseline_airflow_m3h + battery.airflow_m3h, room.airflow_m3h):
            return (
                f"needs {battery.airflow_m3h:.1f} m3/h of ventilation; {room.label} has "
                f"{room.free_airflow_m3h:.1f} m3/h beyond normal charging"
            )
        if self.spare_capacity < 1:
            return (
                f"no spare battery to cover the truck: {self.inputs.spares_available} spares, "
                f"{self.inputs.spares_reserve} kept for shift change"
            )
        return None


class _Load:
    """Equalizing charges placed so far, per room and slot and per site slot."""

    def __init__(self, grid: _Grid):
        self.grid = grid
        self.count = defaultdict(int)  # (room_id, slot)
        self.airflow = defaultdict(float)  # (room_id, slot)
        self.site = defaultdict(int)  # slot

    def copy(self) -> _Load:
        other = _Load(self.grid)
        other.count.update(self.count)
        other.airflow.update(self.airflow)
        other.site.update(self.site)
        return other

    def blocker(self, need: _Need, slot: int) -> str | None:
        """The limit adding this equalizing charge to the slot would break, or None."""
        room = self.grid.room_of(need)
        key = (room.room_id, slot)
        if self.count[key] + 1 > room.equalize_chargers:
            return "chargers"
        airflow = room.baseline_airflow_m3h + self.airflow[key] + self.grid.batteries[need.battery].airflow_m3h
        if not _fits(airflow, room.airflow_m3h):
            return "airflow"
        if self.site[slot] + 1 > self.grid.spare_capacity:
            return "spares"
        return None

    def add(self, need: _Need, slot: int) -> None:
        room_id = self.grid.batteries[need.battery].room_id
        self.count[(room_id, slot)] += 1
        self.airflow[(room_id, slot)] += self.grid.batteries[need.battery].airflow_m3h
        self.site[slot] += 1


# --- Equalizing -------------------------------------------------------------------------------


# How the order was chosen, in words a supervisor reads in `manage.py plan`.
QUICK_ORDER = "quick order (earliest due first)"
BEST_ORDER = "best order found"
FEWEST_LATE = "the fewest days late possible"


@dataclass
class _Outcome:
    placed: list  # (need, slot) for equalizing, (need, day) for watering
    unplaced: list  # (need, reason)
    slots_per_day: int
    method: str
    load: _Load | None = None
    lower_bound: int = 0
    proven_optimal: bool = False

    def day(self, at: int) -> int:
        return at // self.slots_per_day

    def cost(self, days: int) -> int:
        return sum(max(0, self.day(at) - need.due) for need, at in self.placed) + sum(
            days - need.due for need, _ in self.unplaced
        )

    def score(self, days: int) -> tuple:
        severity_days = sum(need.severity * self.day(at) for need, at in self.placed) + sum(
            need.severity * days for need, _ in self.unplaced
        )
        return (self.cost(days), severity_days)


def _plan_equalizing(grid: _Grid, solver_seconds: float) -> _Outcome:
    first = [n for n in (_first_equalize(grid, i) for i in range(len(grid.batteries))) if n is not None]
    first.sort(key=grid.priority)
    never = {n: grid.never_fits(n) for n in first}
    hopeless = [(n, reason) for n, reason in never.items() if reason]
    schedulable = [n for n in first if not never[n]]

    waves = _equalize_in_waves(grid, schedulable, solver_seconds)
    single_pass = _equalize_chronologically(grid, schedulable)
    lower_bound = waves.lower_bound + sum(grid.days - n.due for n, _ in hopeless)
    best = waves if waves.score(grid.days) <= single_pass.score(grid.days) else single_pass
    best.unplaced = hopeless + best.unplaced
    best.lower_bound = lower_bound
    best.proven_optimal = best.cost(grid.days) == lower_bound
    return best


def _equalize_in_waves(grid: _Grid, first: list[_Need], solver_seconds: float) -> _Outcome:
    budget = _Budget(solver_seconds)
    load = _Load(grid)
    placed, unplaced, wave, lower_bound = [], [], first, 0
    methods = []
    while wave:
        assignment, method, bound = _solve_wave(grid, wave, load, budget)
        if not methods:
            lower_bound = bound
        methods.append(method)
        next_wave = []
        for need in wave:
            slot = assignment[need]
            if slot is None:
                unplaced.append(need)
                continue
            load.add(need, slot)
            placed.append((need, slot))
            follow_up = _follow_up(grid, need, grid.day_of(slot))
            if follow_up is not None:
                next_wave.append(follow_up)
        wave = sorted(next_wave, key=grid.priority)
    method = _summarise_waves(methods)
    unplaced = [(n, _why_unplaced(grid, n, load)) for n in unplaced]
    return _Outcome(placed, unplaced, grid.slots_per_day, method, load, lower_bound)


def _summarise_waves(methods: list[str]) -> str:
    if not methods:
        return "nothing due"
    counts = ", ".join(f"{methods.count(m)} by {m}" for m in sorted(set(methods)))
    return f"first charges, then repeats, each round on the chargers the earlier ones left ({len(methods)} rounds: {counts})"


def _equalize_chronologically(grid: _Grid, first: list[_Need]) -> _Outcome:
    """Earliest-due-first, slot by slot in time order, adding follow-ups as charges are placed."""
    load = _Load(grid)
    waiting = list(first)
    placed = []
    for slot in range(grid.slot_count):
        day = grid.day_of(slot)
        window = grid.window_of(slot)
        waiting.sort(key=grid.priority)
        still_waiting = []
        for need in waiting:
            fits_window = grid.batteries[need.battery].equalize_hours <= window.hours + 1e-9
            if need.release <= day and fits_window and load.blocker(need, slot) is None:
                load.add(need, slot)
                placed.append((need, slot))
                follow_up = _follow_up(grid, need, day)
                if follow_up is not None:
                    still_waiting.append(follow_up)
            else:
                still_waiting.append(need)
        waiting = still_waiting
    unplaced = [(n, _why_unplaced(grid, n, load)) for n in waiting]
    return _Outcome(
        placed,
        unplaced,
        grid.slots_per_day,
        f"{QUICK_ORDER}, shift by shift, repeats added as placed",
        load,
    )


def _solve_wave(grid: _Grid, wave: list[_Need], load: _Load, budget: _Budget) -> tuple[dict, str, int]:
    """Place one wave on top of `load`: (need -> slot or None, method, lower bound on its overdue days)."""
    greedy = _edd_wave(grid, wave, load)
    greedy_score = _wave_score(grid, wave, greedy)
    alone = sum(_alone_cost(grid, n, load) for n in wave)
    if greedy_score[0] == alone:
        return greedy, f"{QUICK_ORDER}, {FEWEST_LATE}", alone
    if budget.left() < 0.05:
        return greedy, f"{QUICK_ORDER}; no time left to look for a better one", alone
    exact, proven, bound = _milp_wave(grid, wave, load, greedy_score, budget.left())
    if exact is None or not _wave_is_feasible(grid, exact, load):
        return greedy, f"{QUICK_ORDER}; the search for a better one found none", max(alone, bound)
    best, by = (
        (greedy, QUICK_ORDER)
        if greedy_score <= _wave_score(grid, wave, exact)
        else (exact, BEST_ORDER)
    )  # on a tie EDD wins: it orders ties by serial
    if proven:
        return best, f"{by}, {FEWEST_LATE}", _wave_score(grid, wave, best)[0]
    return best, f"{by}; the search stopped at its time limit", max(alone, bound)


class _Budget:
    def __init__(self, seconds: float):
        self.until = monotonic() + seconds

    def left(self) -> float:
        return max(0.0, self.until - monotonic())


def _edd_wave(grid: _Grid, wave: list[_Need], load: _Load) -> dict:
    trial = load.copy()
    assignment = {}
    for need in sorted(wave, key=grid.priority):
        assignment[need] = None
        for slot in grid.slots_from(need, need.release):
            if trial.blocker(need, slot) is None:
                trial.add(need, slot)
                assignment[need] = slot
                break
    return assignment


def _alone_cost(grid: _Grid, need: _Need, load: _Load) -> int:
    """The need's overdue days if it were the only task of its wave: a lower bound per task."""
    for slot in grid.slots_from(need, need.release):
        if load.blocker(need, slot) is None:
            return max(0, grid.day_of(slot) - need.due)
    return grid.days - need.due


def _assignment_cost(grid: _Grid, wave: list[_Need], assignment: dict) -> int:
    return sum(grid.days - n.due if assignment[n] is None else max(0, grid.day_of(assignment[n]) - n.due) for n in wave)


def _wave_score(grid, wave, assignment) -> tuple:
    severity_days = sum(n.severity * (grid.days if assignment[n] is None else grid.day_of(assignment[n])) for n in wave)
    return (_assignment_cost(grid, wave, assignment), severity_days)


def _wave_is_feasible(grid: _Grid, assignment: dict, load: _Load) -> bool:
    trial = load.copy()
    for need, slot in assignment.items():
        if slot is None:
            continue
        if grid.day_of(slot) < need.release or trial.blocker(need, slot) is not None:
            return False
        if grid.batteries[need.battery].equalize_hours > grid.window_of(slot).hours + 1e-9:
            return False
        trial.add(need, slot)
    return True


def _milp_wave(grid: _Grid, wave: list[_Need], load: _Load, edd_score: tuple, seconds: float) -> tuple:
    """Time-indexed 0-1 program: x[need, slot] + unplaced[need] = 1, limits per room/site slot.

    Returns (assignment or None, overdue days proven least, a lower bound on them). A column costs
    W * overdue days + severity * day with W = 2 * (S + 1), S the largest possible severity sum.
    A plan with more overdue days than the optimum costs at least S + 2 more than it, so once the
    solver's objective is within S + 1 of its lower bound the overdue days are proven least and it
    may stop (the severity tie-break is then best effort). The EDD plan's score sizes that gap.
    """
    severity_most = sum(n.severity for n in wave) * grid.days
    weight = 2 * (severity_most + 1)
    columns, costs = [], []
    for j, need in enumerate(wave):
        for slot in grid.slots_from(need, need.release):
            if load.blocker(need, slot) is None:
                day = grid.day_of(slot)
                columns.append((j, slot))
                costs.append(weight * max(0, day - need.due) + need.severity * day)
        columns.append((j, None))
        costs.append(weight * (grid.days - need.due) + need.severity * grid.days)

    rows, cols, values, lower, upper = [], [], [], [], []

    def add_row(entries, lo, hi):
        row = len(lower)
        for col, value in entries:
            rows.append(row)
            cols.append(col)
            values.append(value)
        lower.append(lo)
        upper.append(hi)

    by_need = defaultdict(list)
    by_room_slot = defaultdict(list)
    by_slot = defaultdict(list)
    for col, (j, slot) in enumerate(columns):
        by_need[j].append(col)
        if slot is not None:
            by_room_slot[(grid.batteries[wave[j].battery].room_id, slot)].append(col)
            by_slot[slot].append(col)
    for j in range(len(wave)):
        add_row([(c, 1.0) for c in by_need[j]], 1.0, 1.0)
    for (room_id, slot), members in by_room_slot.items():
        room = grid.rooms[room_id]
        chargers_left = room.equalize_chargers - load.count[(room_id, slot)]
        if len(members) > chargers_left:
            add_row([(c, 1.0) for c in members], -np.inf, chargers_left)
        airflow_left = room.free_airflow_m3h - load.airflow[(room_id, slot)]
        airflows = [grid.batteries[wave[columns[c][0]].battery].airflow_m3h for c in members]
        # Skipped when the chargers alone keep the airflow in bounds: without airflow rows the
        # matrix is a network matrix and the relaxation is already integral.
        if not _fits(sum(sorted(airflows, reverse=True)[: max(0, chargers_left)]), airflow_left):
            add_row(list(zip(members, airflows)), -np.inf, airflow_left)
    for slot, members in by_slot.items():
        spares_left = grid.spare_capacity - load.site[slot]
        if len(members) > spares_left:
            add_row([(c, 1.0) for c in members], -np.inf, spares_left)

    enough = severity_most + 1
    matrix = coo_matrix((values, (rows, cols)), shape=(len(lower), len(columns))).tocsr()
    result = milp(
        c=np.array(costs, dtype=float),
        integrality=np.ones(len(columns)),
        bounds=Bounds(0, 1),
        constraints=[LinearConstraint(matrix, lower, upper)],
        options={"time_limit": seconds, "mip_rel_gap": enough / max(1.0, weight * edd_score[0] + edd_score[1])},
    )
    bound = getattr(result, "mip_dual_bound", None)
    overdue_at_least = (
        0 if bound is None or not np.isfinite(bound) else math.ceil((bound - severity_most) / weight - 1e-9)
    )
    if result.x is None:
        return None, False, overdue_at_least
    assignment = {need: None for need in wave}
    for col, value in enumerate(result.x):
        j, slot = columns[col]
        if value > 0.5 and slot is not None:
            assignment[wave[j]] = slot
    # HiGHS reports "optimal" once within mip_rel_gap, so the proof comes from the bound alone.
    proven = bound is not None and np.isfinite(bound) and result.fun - bound < enough + 1 - 1e-6
    return assignment, proven, overdue_at_least


def _why_unplaced(grid: _Grid, need: _Need, load: _Load) -> str:
    reason = grid.never_fits(need) if need.kind == EQUALIZE else None
    if reason:
        return reason
    return "no room in the planned days: " + _blocked_summary(grid, need, load, grid.days)


def _blocked_summary(grid: _Grid, need: _Need, load: _Load, before_day: int) -> str:
    room = grid.room_of(need)
    counts = defaultdict(int)
    for slot in grid.slots_from(need, need.release, before_day):
        counts[load.blocker(need, slot)] += 1
    blockers = {
        "chargers": f"equalize-capable chargers in {room.label} busy",
        "airflow": f"ventilation in {room.label} at its limit",
        "spares": "no spare battery left to cover the truck",
    }
    parts = [f"{blockers[k]} in {count(counts[k], 'shift')}" for k in blockers if counts[k]]
    if counts[None]:
        parts.append(f"{count(counts[None], 'shift')} left free by the quick order")
    return ", ".join(parts) or "no shift window long enough"


def _equalize_start(grid: _Grid, slot: int) -> datetime:
    return datetime.combine(grid.day(grid.day_of(slot)), grid.window_of(slot).start)


def _equalize_end(grid: _Grid, need: _Need, slot: int) -> datetime:
    return _equalize_start(grid, slot) + timedelta(hours=grid.batteries[need.battery].equalize_hours)


def _equalize_task(grid: _Grid, need: _Need, slot: int, load: _Load) -> PlannedTask:
    battery = grid.batteries[need.battery]
    day = grid.day_of(slot)
    overdue = max(0, day - need.due)
    reason = need.why
    if day > need.release:
        reason += f"; {count(overdue, 'day')} late: "
        reason += _blocked_summary(grid, need, load, day)
    return PlannedTask(
        battery_id=battery.battery_id,
        serial=battery.serial,
        kind=EQUALIZE,
        room_id=battery.room_id,
        day=grid.day(day),
        start=_equalize_start(grid, slot),
        end=_equalize_end(grid, need, slot),
        due_day=grid.day(need.due),
        days_overdue=overdue,
        severity=need.severity,
        reason=reason,
    )


# --- Watering ---------------------------------------------------------------------------------


def _plan_watering(grid: _Grid, equalizing_placed: list) -> _Outcome:
    first = [n for n in (_first_watering(grid, i) for i in range(len(grid.batteries))) if n is not None]
    capacity = grid.inputs.waterings_per_day
    single = _water_by_day(grid, first, capacity, repeats=False)
    outcome = _water_by_day(grid, first, capacity, repeats=True)
    outcome.lower_bound = single.cost(grid.days)
    outcome.proven_optimal = outcome.cost(grid.days) == outcome.lower_bound
    return outcome


def _water_by_day(grid: _Grid, first: list[_Need], capacity: int | None, repeats: bool) -> _Outcome:
    waiting = list(first)
    placed = []
    for day in range(grid.days):
        waiting.sort(key=grid.priority)
        done_today = 0
        still_waiting = []
        for need in waiting:
            if need.release <= day and (capacity is None or done_today < capacity):
                placed.append((need, day))
                done_today += 1
                follow_up = _follow_up(grid, need, day) if repeats else None
                if follow_up is not None:
                    still_waiting.append(follow_up)
            else:
                still_waiting.append(need)
        waiting = still_waiting
    if capacity == 0:
        why = "no watering capacity: the crew can do 0 waterings a day"
    else:
        why = f"no room in the planned days: the crew's {capacity} waterings a day are all planned"
    unplaced = [(n, why) for n in waiting]
    return _Outcome(placed, unplaced, 1, f"{QUICK_ORDER}, day by day" + (", repeats added as placed" if repeats else ""))


def _water_task(grid: _Grid, need: _Need, day: int, equalizing_placed: list) -> PlannedTask:
    battery = grid.batteries[need.battery]
    after_equalizing = [
        _equalize_end(grid, n, s) for n, s in equalizing_placed if n.battery == need.battery and grid.day_of(s) == day
    ]
    first_window = grid.windows[0]
    start = (
        max(after_equalizing)
        if after_equalizing
        else datetime.combine(grid.day(day), first_window.start) + timedelta(hours=first_window.hours)
    )
    overdue = max(0, day - need.due)
    reason = need.why
    if day > need.release:
        reason += (
            f"; {count(overdue, 'day')} late: crew capacity of "
            f"{grid.inputs.waterings_per_day} waterings a day used on earlier days"
        )
    return PlannedTask(
        battery_id=battery.battery_id,
        serial=battery.serial,
        kind=WATER,
        room_id=battery.room_id,
        day=grid.day(day),
        start=start,
        end=start + timedelta(minutes=battery.watering_minutes),
        due_day=grid.day(need.due),
        days_overdue=overdue,
        severity=need.severity,
        reason=reason,
    )


def _unplaced(grid: _Grid, need: _Need, reason: str) -> UnplacedTask:
    battery = grid.batteries[need.battery]
    return UnplacedTask(
        battery_id=battery.battery_id,
        serial=battery.serial,
        kind=need.kind,
        room_id=battery.room_id,
        due_day=grid.day(need.due),
        days_overdue=grid.days - need.due,
        severity=need.severity,
        reason=reason,
    )

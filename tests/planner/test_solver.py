"""The equalizing and watering planner: hard limits, optimality against exhaustive search, repeats."""

import itertools
import json
import math
import random
from datetime import date, datetime, timedelta

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from fleetcare.planner.solver import (
    EQUALIZE,
    WATER,
    BatteryCare,
    FindingInput,
    Plan,
    PlanInputs,
    PlannedTask,
    RoomLimits,
    check_limits,
    plan_care,
)

START = date(2025, 3, 3)
NIGHT = [("22:00", 8)]


def battery(serial, room="A", airflow=10.0, hours=3.0, due_in=0, **fields):
    """A battery whose equalizing charge falls due `due_in` days after START (weekly), no watering."""
    fields.setdefault("last_equalized", START - timedelta(days=7 - due_in))
    fields.setdefault("water_every_days", None)
    return BatteryCare(
        battery_id=serial, serial=serial, room_id=room, airflow_m3h=airflow, equalize_hours=hours, **fields
    )


def room(room_id="A", chargers=1, airflow=1000.0, baseline=0.0):
    return RoomLimits(room_id=room_id, equalize_chargers=chargers, airflow_m3h=airflow, baseline_airflow_m3h=baseline)


def site(batteries, rooms=None, days=7, windows=NIGHT, spares=100, reserve=0, waterings=None):
    return PlanInputs(
        site_id="north",
        start_date=START,
        days=days,
        shift_windows=windows,
        rooms=rooms or [room()],
        batteries=batteries,
        spares_available=spares,
        spares_reserve=reserve,
        waterings_per_day=waterings,
    )


def days_of(plan, kind=EQUALIZE):
    return {t.serial: (t.day - START).days for t in plan.tasks if t.kind == kind}


# --- Hard limits, by hand ---------------------------------------------------------------------


def test_it_never_puts_more_equalizing_charges_in_a_room_than_chargers():
    inputs = site([battery(f"B{i}") for i in range(5)], rooms=[room(chargers=2)])
    plan = plan_care(inputs)
    per_day = sorted(days_of(plan).values())
    assert per_day == [0, 0, 1, 1, 2]
    assert plan.total_overdue_days == 0 + 0 + 1 + 1 + 2
    assert check_limits(plan, inputs) == []


def test_it_packs_ventilation_to_equalize_the_most_batteries_first():
    # 300 m3/h of ventilation, 100 taken by normal charging: 200 left. A alone (150) or B + C (100 + 100).
    inputs = site(
        [battery("A", airflow=150), battery("B", airflow=100), battery("C", airflow=100)],
        rooms=[room(chargers=3, airflow=300, baseline=100)],
    )
    plan = plan_care(inputs)
    assert days_of(plan) == {"A": 1, "B": 0, "C": 0}
    assert plan.total_overdue_days == 1
    assert plan.proven_optimal
    assert check_limits(plan, inputs) == []


def test_it_keeps_the_spares_needed_at_shift_change():
    inputs = site(
        [battery("A1", room="A"), battery("B1", room="B"), battery("B2", room="B")],
        rooms=[room("A", chargers=2), room("B", chargers=2)],
        spares=3,
        reserve=2,
    )
    plan = plan_care(inputs)
    assert sorted(days_of(plan).values()) == [0, 1, 2]
    assert check_limits(plan, inputs) == []


def test_it_reports_every_battery_when_no_spare_is_free():
    inputs = site([battery("A"), battery("B")], spares=2, reserve=2)
    plan = plan_care(inputs)
    assert plan.tasks == ()
    assert [u.serial for u in plan.unplaced] == ["A", "B"]
    assert "2 spares, 2 kept for shift change" in plan.unplaced[0].reason
    assert plan.unplaced[0].days_overdue == 7  # due day 0, counted through the horizon end + 1


def test_it_equalizes_only_in_a_shift_window_long_enough():
    inputs = site(
        [battery("SHORT", hours=2), battery("LONG", hours=6), battery("HUGE", hours=10)],
        rooms=[room(chargers=3)],
        windows=[("22:00", 8), ("06:00", 2)],
    )
    plan = plan_care(inputs)
    starts = {t.serial: t.start for t in plan.tasks}
    assert starts["SHORT"] == datetime(2025, 3, 3, 6, 0)
    assert starts["LONG"] == datetime(2025, 3, 3, 22, 0)
    assert [t.end for t in plan.tasks if t.serial == "LONG"] == [datetime(2025, 3, 4, 4, 0)]
    [huge] = plan.unplaced
    assert huge.serial == "HUGE"
    assert huge.reason == "needs 10 h of equalizing; the longest shift window is 8 h"


def test_it_reports_a_battery_needing_more_airflow_than_the_room_has():
    inputs = site([battery("BIG", airflow=250)], rooms=[room(chargers=1, airflow=300, baseline=100)])
    [big] = plan_care(inputs).unplaced
    assert "needs 250.0 m3/h of ventilation; room A has 200.0 m3/h beyond normal charging" == big.reason


def test_it_reports_a_battery_without_a_charging_room():
    [lost] = plan_care(site([battery("LOST", room=None)])).unplaced
    assert lost.reason == "no charging room recorded for this battery"


def test_it_says_which_limit_made_a_charge_late():
    plan = plan_care(site([battery("A"), battery("B")], rooms=[room(chargers=1)]))
    late = [t for t in plan.tasks if t.days_overdue]
    assert len(late) == 1
    assert "1 day late: equalize-capable chargers in room A busy in 1 shift" in late[0].reason


def test_it_equalizes_a_severe_finding_first():
    inputs = site([battery("A"), battery("Z", findings=[FindingInput("sulfation", severity=3)])])
    plan = plan_care(inputs)
    assert days_of(plan) == {"Z": 0, "A": 1}
    assert next(t for t in plan.tasks if t.serial == "Z").reason.startswith("equalizing every 7 days")
    assert "urgent sulfation finding" in next(t for t in plan.tasks if t.serial == "Z").reason


def test_a_finding_makes_equalizing_due_today():
    inputs = site([battery("A", due_in=5, findings=[FindingInput("high_spread", severity=2, note="spread 0.030")])])
    [task] = plan_care(inputs).tasks
    assert task.day == START and task.due_day == START and task.severity == 2
    assert task.reason.startswith("high-spread finding: spread 0.030")


def test_it_counts_charges_toward_equalizing():
    inputs = site(
        [
            battery(
                "A",
                equalize_every_days=None,
                equalize_every_charges=6,
                charges_since_equalize=4,
                charges_per_day=1.0,
                last_equalized=None,
            )
        ]
    )
    [task] = plan_care(inputs).tasks
    assert task.due_day == START + timedelta(days=2)


def test_it_counts_overdue_days_from_a_due_day_before_the_plan():
    inputs = site([battery("A", due_in=-3)])
    [task] = plan_care(inputs).tasks
    assert task.day == START and task.due_day == START - timedelta(days=3) and task.days_overdue == 3


def test_it_beats_earliest_due_first_when_rooms_share_spares():
    # Site: 2 spares per slot. Room A has 1 charger, room B 2. Earliest-due-first fills nights 0 and 1
    # with B's four charges (due first) and leaves A's single charger idle on night 1; A's three then
    # queue on nights 2, 3, 4: 0+0+1+1 + 1+2+3 = 8 overdue days. Sharing night 1 gives 6.
    batteries = [battery(f"A{i}", room="A", due_in=1) for i in range(3)]
    batteries += [battery(f"B{i}", room="B", due_in=0) for i in range(4)]
    inputs = site(batteries, rooms=[room("A", chargers=1), room("B", chargers=2)], spares=2)
    plan = plan_care(inputs)
    assert plan.total_overdue_days == 6 == best_by_exhaustive_search(inputs)
    assert plan_care(inputs, solver_seconds=0).total_overdue_days == 8
    nights = sorted(((t.day - START).days, t.room_id) for t in plan.tasks)
    assert nights == [(0, "B"), (0, "B"), (1, "A"), (1, "B"), (2, "A"), (2, "B"), (3, "A")]
    assert plan.proven_optimal
    assert check_limits(plan, inputs) == []


# --- check_limits itself ----------------------------------------------------------------------


def task(serial, room_id="A", start=datetime(2025, 3, 3, 22), hours=3, kind=EQUALIZE):
    return PlannedTask(
        battery_id=serial,
        serial=serial,
        kind=kind,
        room_id=room_id,
        day=start.date(),
        start=start,
        end=start + timedelta(hours=hours),
        due_day=start.date(),
        days_overdue=0,
        severity=0,
        reason="",
    )


def hand_plan(*tasks):
    return Plan(
        site_id="north",
        start_date=START,
        days=7,
        tasks=tasks,
        unplaced=(),
        lower_bound_overdue_days=0,
        proven_optimal=False,
        method="by hand",
    )


def test_check_limits_catches_too_many_charges_too_little_air_and_no_spares():
    inputs = site(
        [battery("A", airflow=150), battery("B", airflow=100)],
        rooms=[room(chargers=1, airflow=300, baseline=100)],
        spares=2,
        reserve=1,
    )
    limits = [v.limit for v in check_limits(hand_plan(task("A"), task("B")), inputs)]
    assert sorted(limits) == ["airflow", "chargers", "spares"]


def test_check_limits_catches_a_charge_outside_the_shift_windows_and_too_many_waterings():
    inputs = site([battery("A"), battery("B")], waterings=1)
    plan = hand_plan(
        task("A", start=datetime(2025, 3, 3, 12)), task("A", kind=WATER, hours=0.25), task("B", kind=WATER, hours=0.25)
    )
    assert sorted(v.limit for v in check_limits(plan, inputs)) == ["shift window", "watering capacity"]


def test_shift_windows_may_not_overlap():
    with pytest.raises(ValueError, match="overlap"):
        site([], windows=[("22:00", 8), ("05:00", 4)])


# --- Exhaustive search on small cases (first charges only) ------------------------------------


def best_by_exhaustive_search(inputs):
    """Least total overdue days over every feasible assignment, by plain backtracking.

    Independent of the planner: slots are (day, window); each equalizing charge goes in one slot
    from its due day on whose window is long enough, or stays unplaced at days - due.
    """
    rooms = {r.room_id: r for r in inputs.rooms}
    spare_cap = inputs.spares_available - inputs.spares_reserve
    windows = inputs.shift_windows
    jobs = []
    for b in inputs.batteries:
        due = (b.last_equalized - START).days + b.equalize_every_days
        if any(f.kind in ("high_spread", "sulfation") for f in b.findings):
            due = min(due, 0)
        if due < inputs.days:
            jobs.append((b, due))
    best = [sum(inputs.days - due for _, due in jobs)]

    count, air, site_count = {}, {}, {}

    def search(i, cost):
        if cost >= best[0]:
            return
        if i == len(jobs):
            best[0] = cost
            return
        b, due = jobs[i]
        r = rooms.get(b.room_id)
        for day in range(max(0, due), inputs.days):
            for w, window in enumerate(windows):
                if r is None or b.equalize_hours > window.hours:
                    continue
                key = (b.room_id, day, w)
                if (
                    count.get(key, 0) + 1 > r.equalize_chargers
                    or r.baseline_airflow_m3h + air.get(key, 0.0) + b.airflow_m3h > r.airflow_m3h + 1e-6
                    or site_count.get((day, w), 0) + 1 > spare_cap
                ):
                    continue
                count[key] = count.get(key, 0) + 1
                air[key] = air.get(key, 0.0) + b.airflow_m3h
                site_count[(day, w)] = site_count.get((day, w), 0) + 1
                search(i + 1, cost + max(0, day - due))
                count[key] -= 1
                air[key] -= b.airflow_m3h
                site_count[(day, w)] -= 1
        search(i + 1, cost + inputs.days - due)

    search(0, 0)
    return best[0]


@st.composite
def small_sites(draw):
    room_ids = ["A", "B"][: draw(st.integers(1, 2))]
    rooms = [
        room(
            r,
            chargers=draw(st.integers(0, 3)),
            airflow=draw(st.sampled_from([100.0, 150.0, 200.0, 300.0])),
            baseline=draw(st.sampled_from([0.0, 50.0])),
        )
        for r in room_ids
    ]
    batteries = [
        battery(
            f"S{i}",
            room=draw(st.sampled_from(room_ids)),
            airflow=draw(st.sampled_from([20.0, 50.0, 70.0, 100.0, 130.0])),
            hours=draw(st.sampled_from([2.0, 4.0, 6.0])),
            due_in=draw(st.integers(-2, 2)),
            findings=draw(st.sampled_from([(), (FindingInput("sulfation", 2),), (FindingInput("high_spread", 1),)])),
        )
        for i in range(draw(st.integers(1, 5)))
    ]
    windows = draw(st.sampled_from([[("22:00", 8)], [("22:00", 8), ("12:00", 4)], [("06:00", 5)]]))
    return site(
        batteries, rooms=rooms, days=3, windows=windows, spares=draw(st.integers(1, 4)), reserve=draw(st.integers(0, 1))
    )


@settings(max_examples=80, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(small_sites())
def test_no_feasible_plan_has_fewer_overdue_days_than_the_planner_on_small_sites(inputs):
    plan = plan_care(inputs)
    assert check_limits(plan, inputs) == []
    assert plan.total_overdue_days == best_by_exhaustive_search(inputs)
    assert plan.proven_optimal
    assert plan.lower_bound_overdue_days == plan.total_overdue_days


def best_watering_by_exhaustive_search(inputs):
    dues = []
    for b in inputs.batteries:
        due = (b.last_watered - START).days + b.water_every_days
        if any(f.kind == "low_level" for f in b.findings):
            due = min(due, 0)
        if due < inputs.days:
            dues.append(due)
    best = None
    choices = [[None] + list(range(max(0, due), inputs.days)) for due in dues]

    def search(i, per_day, cost):
        nonlocal best
        if best is not None and cost >= best:
            return
        if i == len(dues):
            best = cost
            return
        for day in choices[i]:
            if day is None:
                search(i + 1, per_day, cost + inputs.days - dues[i])
            elif per_day.get(day, 0) < inputs.waterings_per_day:
                per_day[day] = per_day.get(day, 0) + 1
                search(i + 1, per_day, cost + max(0, day - dues[i]))
                per_day[day] -= 1

    search(0, {}, 0)
    return best


@settings(max_examples=50, deadline=None)
@given(st.lists(st.tuples(st.integers(-2, 2), st.booleans()), min_size=1, max_size=6), st.integers(0, 2))
def test_no_feasible_watering_plan_has_fewer_overdue_days_than_the_planner(dues, capacity):
    batteries = [
        battery(
            f"W{i}",
            equalize_every_days=None,
            water_every_days=7,
            last_watered=START - timedelta(days=7 - due),
            findings=(FindingInput("low_level", 2),) if low else (),
        )
        for i, (due, low) in enumerate(dues)
    ]
    inputs = site(batteries, days=3, waterings=capacity)
    plan = plan_care(inputs)
    assert check_limits(plan, inputs) == []
    assert plan.total_overdue_days == best_watering_by_exhaustive_search(inputs)
    assert plan.proven_optimal


# --- Large random sites -----------------------------------------------------------------------


def large_site(seed, batteries=200, days=28, rooms=4):
    rng = random.Random(seed)
    room_list = [
        room(f"R{i}", chargers=rng.randint(1, 6), airflow=rng.uniform(300, 900), baseline=rng.uniform(0, 150))
        for i in range(rooms)
    ]
    battery_list = [
        BatteryCare(
            battery_id=i,
            serial=f"FL-{i:04d}",
            room_id=rng.choice(room_list).room_id,
            airflow_m3h=rng.uniform(20, 160),
            equalize_hours=rng.choice([2.0, 3.0, 4.0, 6.0]),
            equalize_every_days=rng.choice([7, 7, 7, 14, None]),
            equalize_every_charges=rng.choice([None, None, 6]),
            charges_per_day=rng.choice([1.0, 2.0]),
            charges_since_equalize=rng.randint(0, 8),
            last_equalized=START - timedelta(days=rng.randint(0, 12)),
            water_every_days=rng.choice([3, 7, None]),
            last_watered=START - timedelta(days=rng.randint(0, 7)),
            findings=tuple(
                FindingInput(rng.choice(["high_spread", "sulfation", "low_level"]), rng.randint(1, 3))
                for _ in range(rng.choice([0, 0, 0, 1]))
            ),
        )
        for i in range(batteries)
    ]
    windows = rng.choice([[("22:00", 8)], [("22:00", 8), ("14:00", 3)], [("06:00", 4), ("14:00", 4), ("22:00", 8)]])
    spares = rng.randint(2, 30)
    return PlanInputs(
        site_id="big",
        start_date=START,
        days=days,
        shift_windows=windows,
        rooms=room_list,
        batteries=battery_list,
        spares_available=spares,
        spares_reserve=rng.randint(0, 2),
        waterings_per_day=rng.choice([None, 30, 60]),
    )


def first_due_days(b):
    """When each kind of care first falls due, in days from START, worked out here from the inputs."""
    equalize, water = [], []
    if b.equalize_every_days:
        equalize.append((b.last_equalized - START).days + b.equalize_every_days)
    if b.equalize_every_charges:
        equalize.append(math.ceil((b.equalize_every_charges - b.charges_since_equalize) / b.charges_per_day))
    if b.water_every_days:
        water.append((b.last_watered - START).days + b.water_every_days)
    for f in b.findings:
        (water if f.kind == "low_level" else equalize).append(0)
    return {EQUALIZE: min(equalize, default=None), WATER: min(water, default=None)}


def assert_sound(plan, inputs):
    assert check_limits(plan, inputs) == []
    assert plan.total_overdue_days >= plan.lower_bound_overdue_days
    accounted = {(t.battery_id, t.kind) for t in plan.tasks} | {(u.battery_id, u.kind) for u in plan.unplaced}
    for b in inputs.batteries:
        for kind, due in first_due_days(b).items():
            assert ((b.battery_id, kind) in accounted) == (due is not None and due < inputs.days), (b, kind)
    for t in plan.tasks:
        assert t.day >= max(t.due_day, START)
        assert t.days_overdue == (t.day - t.due_day).days
    for u in plan.unplaced:
        assert u.reason and u.days_overdue == (START + timedelta(days=inputs.days) - u.due_day).days


@settings(max_examples=30, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.integers(0, 2**32 - 1))
def test_large_random_sites_never_break_a_limit_and_account_for_every_battery(seed):
    # A short solver budget: most later waves then fall back to earliest-due-first, which must be
    # just as feasible.
    inputs = large_site(seed)
    assert_sound(plan_care(inputs, solver_seconds=0.05), inputs)


def test_the_search_for_a_better_order_beats_earliest_due_first_on_a_busy_site():
    inputs = large_site(1, batteries=100, days=14, rooms=3)
    plan = plan_care(inputs)
    earliest_due_first = plan_care(inputs, solver_seconds=0)
    assert_sound(plan, inputs)
    assert_sound(earliest_due_first, inputs)
    assert "best order found" in plan.method
    assert plan.lower_bound_overdue_days <= plan.total_overdue_days < earliest_due_first.total_overdue_days


def test_repeat_charges_are_never_closer_than_their_interval():
    inputs = large_site(7)
    plan = plan_care(inputs, solver_seconds=0.5)
    by_battery = {b.battery_id: b for b in inputs.batteries}
    for (battery_id, kind), days in _days_by_battery(plan).items():
        b = by_battery[battery_id]
        interval = b.equalize_interval_days() if kind == EQUALIZE else b.water_every_days
        gaps = [later - earlier for earlier, later in itertools.pairwise(days)]
        assert all(gap >= interval for gap in gaps), (b.serial, kind, days)


def _days_by_battery(plan):
    days = {}
    for t in plan.tasks:
        days.setdefault((t.battery_id, t.kind), []).append((t.day - START).days)
    return {key: sorted(value) for key, value in days.items()}


# --- Repeats, watering, determinism, output ---------------------------------------------------


def test_a_weekly_battery_gets_four_equalizing_charges_in_four_weeks():
    plan = plan_care(site([battery("A")], days=28))
    assert [(t.day - START).days for t in plan.tasks] == [0, 7, 14, 21]
    assert plan.tasks[1].reason == "every 7 days after the one planned for 2025-03-03"
    assert plan.proven_optimal


def test_a_late_charge_moves_the_next_one_instead_of_making_it_late_too():
    # One charger, A and B weekly and both due today: B goes a day late, then stays on its own week.
    plan = plan_care(site([battery("A"), battery("B")], days=28))
    assert _days_by_battery(plan) == {("A", EQUALIZE): [0, 7, 14, 21], ("B", EQUALIZE): [1, 8, 15, 22]}
    assert plan.total_overdue_days == 1


def test_it_never_waters_more_batteries_a_day_than_the_crew_can():
    batteries = [
        battery(f"W{i}", equalize_every_days=None, water_every_days=14, last_watered=START - timedelta(days=14))
        for i in range(5)
    ]
    inputs = site(batteries, waterings=2)
    plan = plan_care(inputs)
    assert sorted(days_of(plan, WATER).values()) == [0, 0, 1, 1, 2]
    assert plan.total_overdue_days == 4
    assert check_limits(plan, inputs) == []


def test_it_waters_after_the_equalizing_charge():
    inputs = site([battery("A", water_every_days=7, last_watered=START - timedelta(days=7))])
    plan = plan_care(inputs)
    equalize, water = sorted(plan.for_day(START), key=lambda t: t.start)
    assert (equalize.kind, water.kind) == (EQUALIZE, WATER)
    assert water.start == equalize.end == datetime(2025, 3, 4, 1, 0)


def test_it_waters_at_the_end_of_the_charging_window_on_other_days():
    inputs = site([battery("A", equalize_every_days=None, water_every_days=7, last_watered=START - timedelta(days=7))])
    [water] = plan_care(inputs).tasks
    assert water.start == datetime(2025, 3, 4, 6, 0)
    assert water.end == datetime(2025, 3, 4, 6, 15)


def test_it_plans_the_same_whatever_the_input_order():
    inputs = large_site(11, batteries=80, days=14, rooms=2)
    shuffled = list(inputs.batteries)
    random.Random(3).shuffle(shuffled)
    again = PlanInputs(**{**inputs.__dict__, "batteries": tuple(shuffled)})
    assert plan_care(inputs).to_json_dict() == plan_care(again).to_json_dict() == plan_care(inputs).to_json_dict()


def test_its_json_is_plain_and_its_views_group_by_day_and_room():
    inputs = site([battery("A", room="A"), battery("B", room="B")], rooms=[room("A"), room("B")], days=14)
    plan = plan_care(inputs)
    data = json.loads(json.dumps(plan.to_json_dict()))
    assert data["tasks"][0] == {
        "battery_id": "A",
        "serial": "A",
        "kind": "equalize",
        "room_id": "A",
        "day": "2025-03-03",
        "start": "2025-03-03T22:00:00",
        "end": "2025-03-04T01:00:00",
        "due_day": "2025-03-03",
        "days_overdue": 0,
        "severity": 0,
        "reason": "equalizing every 7 days, last on 2025-02-24",
    }
    assert [t.serial for t in plan.for_day(START)] == ["A", "B"]

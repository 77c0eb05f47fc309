"""The plan built from database rows: every limit holds, sealed batteries are never equalized, findings ask
for work today, charges come from logged post-charge readings, airflow follows IEC/EN 62485-3."""
import datetime as dt
from decimal import Decimal

import pytest
from django.utils import timezone

from fleetcare.planner import solver
from fleetcare.fleet.models import Battery, BatteryProfile, ShiftWindow
from fleetcare.planner import inputs as planner_inputs
from fleetcare.planner.models import Policy, RoomSettings
from fleetcare.planner.plans import plans_for
from fleetcare.planner import due

from .conftest import add_batteries, cared_for, equalized, finding, inspect, water


def build(site, now, days=14):
    entry = planner_inputs.build([site], now, days)[site.pk]
    return entry, solver.plan_care(entry.inputs, solver_seconds=2)


def equalizing(plan):
    return [t for t in plan.tasks if t.kind == "equalize"]


def test_the_plan_from_the_database_keeps_every_limit(warehouse, sealed_profile, crew, now):
    site = warehouse["site"]
    sealed = add_batteries(site, sealed_profile, warehouse["room"], 2, prefix="TW-AGM")
    for b in sealed:
        finding(b, "high_spread", now)
    cared_for(warehouse["trays"][0], crew, now, days_ago=2)
    entry, plan = build(site, now, days=14)
    assert solver.check_limits(plan, entry.inputs) == []
    # one spare beyond the reserve: one equalizing charge at a time, nightly (the early window is too short)
    starts = [t.start for t in equalizing(plan)]
    assert len(starts) == len(set(starts)) == 14
    assert {t.start.time() for t in equalizing(plan)} == {dt.time(22, 0)}
    assert not [t for t in plan.tasks if t.battery_id in {b.pk for b in sealed}]


def test_sealed_batteries_are_never_equalized_or_watered_even_with_a_finding(site, room, sealed_profile, windows, crew, now):
    pair = add_batteries(site, sealed_profile, room, 1, prefix="TW-AGM")[0]
    add_batteries(site, sealed_profile, room, 2, prefix="TW-SP", status=Battery.Status.SPARE)
    finding(pair, "high_spread", now, severity=3)
    finding(pair, "low_level", now)
    entry, plan = build(site, now)
    assert entry.inputs.batteries == ()
    assert plan.tasks == () and plan.unplaced == ()


def test_a_sealed_profile_that_allows_equalizing_is_planned(site, room, windows, crew, now):
    allowed = BatteryProfile.objects.create(
        name="48 V gel allowed", technology="gel", nominal_voltage=48, monoblocks=4, cells_per_block=6,
        capacity_ah=200, watering_allowed=False, equalizing_allowed=True)
    b = add_batteries(site, allowed, room, 1, prefix="TW-GEL")[0]
    add_batteries(site, allowed, room, 2, prefix="TW-GSP", status=Battery.Status.SPARE)
    _entry, plan = build(site, now, days=7)
    kinds = {(t.battery_id, t.kind) for t in plan.tasks}
    assert (b.pk, "equalize") in kinds
    assert not [t for t in plan.tasks if t.kind == "water"]


def test_a_high_spread_finding_asks_for_equalizing_today(warehouse, crew, now):
    trays = warehouse["trays"]
    for b in trays + warehouse["spares"]:
        cared_for(b, crew, now, days_ago=1)
    target = trays[3]
    finding(target, "high_spread", now, severity=3)
    entry, plan = build(warehouse["site"], now, days=7)
    first = equalizing(plan)[0]
    assert (first.battery_id, first.day, first.due_day) == (target.pk, entry.today, entry.today)
    assert first.severity == 3 and "high-spread finding" in first.reason


def test_a_finding_already_answered_by_an_equalizing_charge_waits_for_the_next_reading(warehouse, crew, now):
    target = warehouse["trays"][0]
    for b in warehouse["trays"] + warehouse["spares"]:
        cared_for(b, crew, now, days_ago=2)
    finding(target, "high_spread", now)  # last seen an hour ago
    equalized(target, crew, now - dt.timedelta(minutes=20))
    entry, plan = build(warehouse["site"], now, days=7)
    care = next(c for c in entry.inputs.batteries if c.battery_id == target.pk)
    assert care.findings == ()
    assert not [t for t in equalizing(plan) if t.battery_id == target.pk]  # next one a week after today's charge
    assert equalizing(plan)  # the others still fall due inside the week


def test_last_dates_come_from_records_and_equalized_readings(warehouse, crew, now):
    a, b = warehouse["trays"][:2]
    equalized(a, crew, now - dt.timedelta(days=3))
    inspect(b, crew, now - dt.timedelta(days=4), situation="equalized")
    water(a, crew, now - dt.timedelta(days=5))
    entry, _ = build(warehouse["site"], now, days=7)
    cares = {c.battery_id: c for c in entry.inputs.batteries}
    local = lambda t: t.astimezone(warehouse["site"].tzinfo).date()
    assert cares[a.pk].last_equalized == local(now - dt.timedelta(days=3))
    assert cares[b.pk].last_equalized == local(now - dt.timedelta(days=4))
    assert cares[a.pk].last_watered == local(now - dt.timedelta(days=5))
    assert cares[b.pk].last_watered is None


def test_charges_come_from_logged_post_charge_readings_else_the_site_setting(warehouse, traction_profile, crew, now):
    Policy.objects.create(profile=traction_profile, equalize_every_charges=5)
    logged, unlogged = warehouse["trays"][:2]
    equalized(logged, crew, now - dt.timedelta(days=6))
    equalized(unlogged, crew, now - dt.timedelta(days=2))
    for days_ago in (5, 4, 3, 2, 1):
        inspect(logged, crew, now - dt.timedelta(days=days_ago, hours=-2))
    site = warehouse["site"]
    site.charges_per_day = Decimal("1.5")
    site.save()
    entry, _ = build(site, now, days=7)
    cares = {c.battery_id: c for c in entry.inputs.batteries}
    assert cares[logged.pk].charges_since_equalize == 5
    assert cares[logged.pk].charges_per_day == pytest.approx(5 / 28, abs=1e-4)  # five in the four-week window
    care = cares[logged.pk]
    assert due.equalizing_due(care, entry.today, care.last_equalized, care.in_service) == entry.today  # fifth charge
    assert cares[unlogged.pk].charges_per_day == 1.5
    assert cares[unlogged.pk].charges_since_equalize == 3  # two days at 1.5 a day


def test_room_airflow_follows_iec_62485_3(warehouse):
    # 24 cells, 775 Ah; Q = 0.055 n I_gas C/100 (IEC/EN 62485-3, gas at 25 °C; ZVEI leaflet No. 14, 2020):
    # normal charge at I_gas 2 = 0.055 x 24 x 15.5 A = 20.46 m³/h; equalizing at I_gas 7 adds 5 A/100 Ah
    # = 0.055 x 24 x 38.75 A = 51.15 m³/h
    entry = planner_inputs.build([warehouse["site"]], dt.datetime.now(dt.UTC), 7)[warehouse["site"].pk]
    room = entry.inputs.rooms[0]
    assert room.baseline_airflow_m3h == pytest.approx(4 * 20.46, abs=0.01)  # four chargers, the largest trays
    assert entry.inputs.batteries[0].airflow_m3h == pytest.approx(51.15, abs=0.01)
    RoomSettings.objects.create(room=warehouse["room"], charging_at_once=2)
    entry = planner_inputs.build([warehouse["site"]], dt.datetime.now(dt.UTC), 7)[warehouse["site"].pk]
    assert entry.inputs.rooms[0].baseline_airflow_m3h == pytest.approx(2 * 20.46, abs=0.01)
    RoomSettings.objects.filter(room=warehouse["room"]).update(baseline_airflow_m3h=Decimal(100))
    entry = planner_inputs.build([warehouse["site"]], dt.datetime.now(dt.UTC), 7)[warehouse["site"].pk]
    assert entry.inputs.rooms[0].baseline_airflow_m3h == 100


def test_a_room_whose_normal_charging_fills_its_ventilation_plans_no_equalizing(warehouse, now):
    warehouse["room"].airflow_m3h = Decimal(70)  # four trays on normal charge need 82 m³/h
    warehouse["room"].save()
    _entry, plan = build(warehouse["site"], now, days=7)
    assert equalizing(plan) == []
    assert all("ventilation" in u.reason for u in plan.unplaced if u.kind == "equalize")


def test_overlapping_shift_windows_are_cut_short_not_refused(warehouse, now):
    ShiftWindow.objects.filter(name="Night").update(hours=Decimal(9))  # 22:00 + 9 h runs past 05:30
    entry, plan = build(warehouse["site"], now, days=7)
    assert [w.hours for w in entry.inputs.shift_windows] == [1.5, 7.5]
    assert "planned as 7.5 h" in entry.notes[0]
    assert solver.check_limits(plan, entry.inputs) == []


def test_the_stored_plan_is_reused_until_a_record_changes_it(warehouse, crew, now, django_assert_num_queries):
    site = warehouse["site"]
    entry = planner_inputs.build([site], now, 14)[site.pk]
    first = plans_for([entry], now=now)[site.pk]
    again = plans_for([planner_inputs.build([site], now, 14)[site.pk]], now=now)[site.pk]
    assert again.to_json_dict() == first.to_json_dict()
    water(warehouse["trays"][0], crew, now - dt.timedelta(minutes=5))
    changed = plans_for([planner_inputs.build([site], now, 14)[site.pk]], now=now)[site.pk]
    assert changed.to_json_dict() != first.to_json_dict()


def test_a_running_equalizing_charge_answers_the_finding(warehouse, crew, now):
    from fleetcare.planner.models import EqualizingCharge

    target = warehouse["trays"][0]
    started = now - dt.timedelta(hours=3)
    EqualizingCharge.objects.create(battery=target, by=crew, started_at=started)
    finding(target, "sulfation", now)  # seen after the charge began
    entry, plan = build(warehouse["site"], now, days=7)
    care = next(c for c in entry.inputs.batteries if c.battery_id == target.pk)
    # The day the charge began at the site: yesterday when the test runs before 03:00 there.
    began = timezone.localtime(started, warehouse["site"].tzinfo).date()
    assert care.findings == () and care.last_equalized == began
    assert not [t for t in equalizing(plan) if t.battery_id == target.pk]

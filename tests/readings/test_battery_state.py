"""The battery's kept state equals what its history gives, after any mix of writes, corrections and removals."""
import datetime as dt
import io
import random
from decimal import Decimal
from importlib import import_module

import pytest
from django.apps import apps
from django.core.management import call_command

from fleetcare.fleet.models import Battery, Site
from fleetcare.readings import services, state
from fleetcare.readings.csv_io import import_readings
from fleetcare.readings.models import BatteryMonth, BatteryState, Inspection, WaterTopUp

# Readings fall on both sides of a month's end on every clock below (Tokyo's is at 15:00 UTC the day before,
# Chicago's at 05:00 UTC), so the kept monthly totals meet the boundary.
START = dt.datetime(2026, 10, 31, 6, 0, tzinfo=dt.UTC)
CLOCKS = ["UTC", "Europe/London", "America/Chicago", "Asia/Tokyo"]
SITUATIONS = [value for value, _ in Inspection.Situation.choices]


def cells(rng, count):
    base = rng.choice(["1.150", "1.200", "1.250", "1.280"])
    return [services.CellEntry(position=n, sg=Decimal(base) + Decimal(rng.randint(-30, 5)) / 1000)
            for n in range(1, count + 1)]


def when(rng):
    # Few distinct moments, so readings often share a time and the later stored must win the tie.
    return START + dt.timedelta(hours=3 * rng.randint(0, 10))


def record(rng, battery, user):
    pilot = rng.random() < 0.4
    services.record_inspection(
        battery=battery, user=user, taken_at=when(rng), situation=rng.choice(SITUATIONS),
        scope=Inspection.Scope.PILOT if pilot else Inspection.Scope.ALL_CELLS,
        cells=cells(rng, 1 if pilot else battery.profile.cell_count), temp_c=Decimal("25"),
    )


def correct(rng, battery, user):
    old = rng.choice(list(Inspection.objects.current().filter(battery=battery)) or [None])
    if old is None:
        return
    count = 1 if old.scope == Inspection.Scope.PILOT else battery.profile.cell_count
    services.correct_inspection(old, user=user, reason="typed in the wrong column", cells=cells(rng, count),
                                temp_c=old.temp_c, taken_at=rng.choice([old.taken_at, when(rng)]),
                                situation=rng.choice(SITUATIONS), scope=old.scope)


def remove(rng, battery, user):
    old = rng.choice(list(Inspection.objects.current().filter(battery=battery)) or [None])
    if old is not None:
        services.remove_inspection(old, user=user, reason="wrong battery")


def top_up(rng, battery, user):
    services.record_top_up(battery=battery, user=user, done_at=when(rng), volume_ml=Decimal(rng.randint(500, 4000)))


def remove_top_up(rng, battery, user):
    old = rng.choice(list(WaterTopUp.objects.current().filter(battery=battery)) or [None])
    if old is not None:
        services.remove_top_up(old, user=user, reason="logged twice")


def csv_import(rng, battery, user):
    """A file for this battery and, half the time, every other one too (a chunk spans batteries)."""
    day = START + dt.timedelta(hours=rng.randint(0, 30), minutes=rng.randint(0, 59))
    text = "serial,taken_at,situation,cell,sg,temp,volts,level\n"
    for reading in range(rng.randint(1, 3)):
        taken = (day + dt.timedelta(hours=reading)).strftime("%Y-%m-%dT%H:%M")
        situation = rng.choice(["charged", "equalized", "rested", "before_charge"])
        for each in [battery] + (list(Battery.objects.exclude(pk=battery.pk)) if rng.random() < 0.5 else []):
            text += "".join(f"{each.serial},{taken},{situation},{c.position},{c.sg},25,,ok\n"
                            for c in cells(rng, each.profile.cell_count))
    report = import_readings(io.StringIO(text), user=user, batteries=Battery.objects.all())
    assert report.imported, report.errors


def change_clock(rng, battery, user):
    """The site's clock is set to another zone: its batteries' months are counted again."""
    site = battery.site
    site.timezone = rng.choice(CLOCKS)
    site.save()


def move(rng, battery, user):
    """The battery moves to another site (often on another clock)."""
    battery.site = rng.choice(list(Site.objects.exclude(pk=battery.site_id)))
    battery.save()


STEPS = [record] * 5 + [correct] * 2 + [remove, top_up, top_up, remove_top_up, csv_import, change_clock, move]


@pytest.mark.parametrize("seed", range(4))
def test_the_kept_state_equals_the_rebuild_after_any_sequence_of_writes(battery, other_battery, supervisor, seed):
    rng = random.Random(seed)
    batteries = [battery, other_battery]
    for each, clock in zip(batteries, ("Asia/Tokyo", "America/Chicago"), strict=True):
        each.site.timezone = clock
        each.site.save()
    months_seen = set()
    for step in range(40):
        action = rng.choice(STEPS)
        action(rng, rng.choice(batteries), supervisor)
        assert state.differences([b.pk for b in batteries]) == {}, f"after step {step}: {action.__name__}"
        months_seen |= set(BatteryMonth.objects.values_list("month", flat=True))
    # The history really was varied: both batteries kept readings, some were corrected and removed.
    assert Inspection.objects.filter(is_current=False).exists() or Inspection.objects.filter(deleted_at__isnull=False).exists()
    assert BatteryState.objects.filter(charge_count__gt=0, first_post_charge_at__isnull=False).exists()
    assert BatteryMonth.objects.filter(top_ups__gt=0).exists() and BatteryMonth.objects.filter(before_charge_socs__gt=0).exists()
    assert len(months_seen) > 1  # the month's end was crossed


def test_the_state_names_the_latest_reading_of_each_kind(battery, supervisor):
    def add(hours, situation, scope=Inspection.Scope.ALL_CELLS, sg="1.280"):
        count = 1 if scope == Inspection.Scope.PILOT else 24
        return services.record_inspection(
            battery=battery, user=supervisor, taken_at=START + dt.timedelta(hours=hours), situation=situation, scope=scope,
            cells=[services.CellEntry(position=n, sg=Decimal(sg) - (Decimal("0.020") if n == 5 else 0))
                   for n in range(1, count + 1)], temp_c=Decimal("25"),
        )[0]

    equalized = add(0, "equalized")
    charged = add(24, "charged", sg="1.265")
    before = add(40, "before_charge", scope=Inspection.Scope.PILOT, sg="1.160")
    kept = BatteryState.objects.get(battery=battery)
    assert kept.latest_inspection == before and kept.latest_situation == "before_charge"
    assert kept.all_cells_inspection == charged
    # mean (23 x 1.265 + 1.245) / 24 = 1.26417; (1.26417 - 1.140) / (1.290 - 1.140) = 82.8 %: the after-charge
    # reading, not the later before-charge one
    assert kept.soc_inspection == charged and kept.soc_percent == Decimal("82.8")
    assert kept.sg_spread == kept.post_charge_sg_spread == Decimal("0.020")
    assert kept.equalized_at == equalized.taken_at
    assert kept.charge_count == 2
    assert kept.first_post_charge_at == equalized.taken_at and kept.post_charge_at == charged.taken_at

    services.remove_inspection(charged, user=supervisor, reason="wrong battery")
    kept.refresh_from_db()
    assert kept.soc_inspection == equalized and kept.charge_count == 1
    assert kept.latest_inspection == before

    services.remove_inspection(equalized, user=supervisor, reason="wrong battery")
    kept.refresh_from_db()
    assert kept.charge_count == 0 and kept.first_post_charge_at is None


def test_the_rebuild_command_finds_and_mends_a_state_that_drifted(battery, other_battery, supervisor):
    rng = random.Random(11)
    for _ in range(6):
        record(rng, battery, supervisor)
    top_up(rng, battery, supervisor)
    BatteryState.objects.filter(battery=battery).update(charge_count=99, watered_at=None)
    BatteryState.objects.filter(battery=other_battery).delete()

    out = io.StringIO()
    call_command("rebuild_battery_state", "--check", stdout=out)
    assert f"battery {battery.pk}: charge_count, watered_at" in out.getvalue()
    assert "1 batteries differ" in out.getvalue()

    call_command("rebuild_battery_state", stdout=io.StringIO())
    assert state.differences() == {}
    assert BatteryState.objects.get(battery=other_battery).latest_inspection is None


def test_an_import_that_fails_leaves_the_state_as_it_was(battery, supervisor):
    rng = random.Random(3)
    record(rng, battery, supervisor)
    before = state.stored([battery.pk])
    text = ("serial,taken_at,situation,cell,sg,temp,volts,level\n"
            + "".join(f"{battery.serial},2026-12-01T06:00,charged,{n},1.480,25,,ok\n" for n in range(1, 25)))
    report = import_readings(io.StringIO(text), user=supervisor, batteries=Battery.objects.all())
    assert not report.imported
    assert state.stored([battery.pk]) == before


def test_a_fleet_from_before_the_state_table_gets_its_state_after_migrating(battery, other_battery, supervisor):
    from fleetcare.readings.apps import fill_missing_state

    rng = random.Random(7)
    for _ in range(3):
        record(rng, battery, supervisor)
    top_up(rng, battery, supervisor)
    expected = state.computed([battery.pk])[battery.pk]
    BatteryState.objects.all().delete()  # as the table was when it was first created

    fill_missing_state(sender=None)

    kept = BatteryState.objects.get(battery=battery)
    assert {name: getattr(kept, name) for name in expected} == expected
    assert not BatteryState.objects.filter(battery=other_battery).exists()  # no history, nothing to keep
    assert state.differences() == {}


def test_state_rows_from_before_the_earliest_charge_was_kept_get_it_when_migrating(battery, other_battery, supervisor):
    fill = import_module("fleetcare.readings.migrations.0013_first_post_charge_at").fill
    rng = random.Random(5)
    for _ in range(8):
        record(rng, battery, supervisor)
    record(rng, other_battery, supervisor)
    expected = state.stored([battery.pk, other_battery.pk])
    BatteryState.objects.update(first_post_charge_at=None)  # as the rows were before the field existed

    fill(apps, schema_editor=None)

    assert state.stored([battery.pk, other_battery.pk]) == expected
    assert expected[battery.pk]["first_post_charge_at"] is not None
    assert state.differences() == {}


def test_a_fleet_from_before_the_monthly_totals_gets_them_after_migrating(battery, other_battery, supervisor):
    from fleetcare.readings.apps import fill_missing_state

    rng = random.Random(9)
    for _ in range(12):
        rng.choice([record, top_up])(rng, rng.choice([battery, other_battery]), supervisor)
    expected = state.stored_months([battery.pk, other_battery.pk])
    assert expected
    BatteryMonth.objects.all().delete()  # as the table was when it was first created

    fill_missing_state(sender=None)

    assert state.stored_months([battery.pk, other_battery.pk]) == expected
    assert state.differences() == {}

"""A small warehouse for the planner: two shift windows, one room, flooded trays, a spare, and a sealed pair."""
import datetime as dt
from decimal import Decimal

import pytest
from django.utils import timezone

from fleetcare.care.models import Finding
from fleetcare.fleet.models import Battery, ShiftWindow
from fleetcare.planner.models import EqualizingCharge
from fleetcare.readings.services import CellEntry, record_inspection, record_top_up


@pytest.fixture
def now():
    return timezone.now().replace(microsecond=0)


@pytest.fixture
def windows(site):
    return [
        ShiftWindow.objects.create(site=site, name="Early", starts_at=dt.time(5, 30), hours=Decimal("1.5")),
        ShiftWindow.objects.create(site=site, name="Night", starts_at=dt.time(22, 0), hours=Decimal("7.5")),
    ]


def add_batteries(site, profile, room, count, prefix="TW-F", status=Battery.Status.IN_SERVICE, start=1):
    return [
        Battery.objects.create(serial=f"{prefix}{n:03d}", profile=profile, site=site, charging_room=room,
                               in_service_date=dt.date(2024, 1, 1), status=status)
        for n in range(start, start + count)
    ]


def inspect(battery, user, when, situation="charged", scope="all", sg="1.285"):
    positions = [battery.pilot_cell] if scope == "pilot" else range(1, battery.profile.positions + 1)
    if battery.profile.reads_by_block:
        cells = [CellEntry(position=p, volts=Decimal("12.80")) for p in positions]
        situation = "rested"
    else:
        cells = [CellEntry(position=p, sg=Decimal(sg), level="ok") for p in positions]
    inspection, _ = record_inspection(battery=battery, user=user, taken_at=when, situation=situation, cells=cells,
                                      scope=scope, temp_c=Decimal("25.0"), hours_since_charge=Decimal(12))
    return inspection


def water(battery, user, when, ml="1200"):
    return record_top_up(battery=battery, user=user, done_at=when, volume_ml=Decimal(ml), volume_entered="1.2 L")[0]


def equalized(battery, user, ended_at, hours=3):
    return EqualizingCharge.objects.create(battery=battery, by=user, started_at=ended_at - dt.timedelta(hours=hours),
                                           ended_at=ended_at)


def finding(battery, kind, now, severity=2):
    return Finding.objects.create(battery=battery, kind=kind, severity=severity, opened_at=now - dt.timedelta(hours=1),
                                  last_seen_at=now - dt.timedelta(hours=1), summary=f"test {kind}")


def cared_for(battery, user, now, days_ago=1):
    """Equalized, watered and read `days_ago` days ago: nothing due for a week."""
    when = now - dt.timedelta(days=days_ago)
    equalized(battery, user, when)
    water(battery, user, when + dt.timedelta(minutes=30))
    inspect(battery, user, when + dt.timedelta(minutes=40), situation="equalized")


@pytest.fixture
def warehouse(site, room, traction_profile, windows, crew, now):
    """Site tw: room 1 (4 chargers, 2 equalize-capable, 60 m³/h airflow set below to fit), 6 trays and 2 spares."""
    room.airflow_m3h = Decimal(250)
    room.save()
    site.spares_reserve = 1
    site.save()
    trays = add_batteries(site, traction_profile, room, 6)
    spares = add_batteries(site, traction_profile, room, 2, prefix="TW-S", status=Battery.Status.SPARE)
    return {"site": site, "room": room, "trays": trays, "spares": spares}

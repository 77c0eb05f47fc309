"""A small fleet builder for the dashboard tests: batteries with readings, water, fittings and findings."""

import datetime as dt
from decimal import Decimal

import pytest
from django.utils import timezone

from fleetcare.care.models import Finding
from fleetcare.fleet.models import Battery, Fitting, Vehicle
from fleetcare.readings.services import CellEntry, record_inspection, record_top_up


def read(battery, user, when, situation="charged", sg="1.290", scope="all", weak=None):
    """Record an inspection at 25 °C (no temperature correction for the test profiles): every cell at
    `sg`, or only the pilot cell for scope="pilot"; `weak` = (cell, sg) lowers one cell."""
    if scope == "pilot":
        cells = [CellEntry(position=battery.pilot_cell, sg=Decimal(sg))]
    else:
        cells = [CellEntry(position=p, sg=Decimal(sg)) for p in range(1, battery.profile.cell_count + 1)]
        if weak:
            cells[weak[0] - 1] = CellEntry(position=weak[0], sg=Decimal(weak[1]))
    inspection, _ = record_inspection(
        battery=battery, user=user, taken_at=when, situation=situation, cells=cells, scope=scope, temp_c=Decimal(25)
    )
    return inspection


def water(battery, user, when, ml):
    return record_top_up(battery=battery, user=user, done_at=when, volume_ml=Decimal(ml))[0]


@pytest.fixture
def now():
    return timezone.now()


@pytest.fixture
def build_fleet(site, traction_profile, supervisor, now):
    """build_fleet(n): n flooded batteries at the test site, each fitted to its own truck on the Day
    shift, read weekly after charge and before charge for eight weeks, watered weekly, one finding each."""

    def build(n, prefix="F"):
        batteries = []
        for k in range(n):
            b = Battery.objects.create(
                serial=f"{prefix}-{k:03d}", profile=traction_profile, site=site, in_service_date=dt.date(2024, 1, 1)
            )
            truck = Vehicle.objects.create(asset_number=f"{prefix}-T{k:03d}", kind=Vehicle.Kind.REACH, site=site)
            Fitting.objects.create(battery=b, vehicle=truck, fitted_at=now - dt.timedelta(weeks=10), shift="Day")
            for week in range(8):
                when = now - dt.timedelta(weeks=week, hours=1)
                read(b, supervisor, when, "equalized" if week % 2 else "charged", weak=(3, "1.250"))
                read(b, supervisor, when - dt.timedelta(days=2), "before_charge", sg="1.160", scope="pilot")
                water(b, supervisor, when, 2400)
            Finding.objects.create(
                battery=b,
                kind=Finding.Kind.WEAK_CELL,
                opened_at=now - dt.timedelta(days=3),
                last_seen_at=now,
                positions=[3],
            )
            batteries.append(b)
        return batteries

    return build

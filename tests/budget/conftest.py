"""A small budget world at the test warehouse: a tray ageing out, one failing its capacity test, one with a
failing cell, a retired one, and the other site's battery that must never show."""
import datetime as dt
from decimal import Decimal

import pytest
from django.utils import timezone

from fleetcare.accounts.roles import MANAGER
from fleetcare.budget.services import record_rated_capacity_test
from fleetcare.care.detection import detect_for_batteries
from fleetcare.fleet.models import Battery
from fleetcare.readings.models import Inspection
from fleetcare.readings.services import CellEntry, record_inspection
from tests.conftest import make_user

DESIGN_LIFE_DAYS = 1826  # the traction profile's 5.0 years of 365.25 days, rounded


def quarter_label(day):
    return f"{day.year} Q{(day.month - 1) // 3 + 1}"


def post_charge_readings(battery, user, days_ago, weak_cell=None, weak_sg="1.245"):
    """All-cell readings after a charge: every cell 1.288 at 25 °C, a weak cell lower if asked."""
    now = timezone.now()
    for days in days_ago:
        cells = [
            CellEntry(position=n, sg=Decimal(weak_sg if n == weak_cell else "1.288"))
            for n in range(1, battery.profile.cell_count + 1)
        ]
        record_inspection(battery=battery, user=user, taken_at=now - dt.timedelta(days=days),
                          situation=Inspection.Situation.JUST_CHARGED, cells=cells, temp_c=Decimal("25.0"),
                          hydrometer_compensated=True)


@pytest.fixture
def world(site, other_site, traction_profile, manager, supervisor):
    today = timezone.localdate()
    site.charges_per_day = Decimal("0.50")  # 1500 design cycles last 3000 days: age decides unless evidence says sooner
    site.save()
    ageing = Battery.objects.create(serial="TW-AGE", profile=traction_profile, site=site,
                                    in_service_date=today - dt.timedelta(days=DESIGN_LIFE_DAYS - 200))
    weak_capacity = Battery.objects.create(serial="TW-CAP", profile=traction_profile, site=site,
                                           in_service_date=today - dt.timedelta(days=800))
    for days, pct in ((500, "96.0"), (250, "88.5"), (10, "79.0")):
        record_rated_capacity_test(battery=weak_capacity, user=supervisor, tested_on=today - dt.timedelta(days=days),
                                   percent_of_rated=Decimal(pct))
    failing_cell = Battery.objects.create(serial="TW-CELL", profile=traction_profile, site=site,
                                          in_service_date=today - dt.timedelta(days=365))
    post_charge_readings(failing_cell, supervisor, (21, 14, 7), weak_cell=9)
    detect_for_batteries(Battery.objects.filter(pk=failing_cell.pk))  # the budget counts what the findings call failing
    retired = Battery.objects.create(serial="TW-OLD", profile=traction_profile, site=site,
                                     in_service_date=dt.date(2015, 1, 1), status=Battery.Status.RETIRED)
    elsewhere = Battery.objects.create(serial="OT-AGE", profile=traction_profile, site=other_site,
                                       in_service_date=dt.date(2019, 1, 1))
    return {"today": today, "ageing": ageing, "capacity": weak_capacity, "cell": failing_cell, "retired": retired,
            "elsewhere": elsewhere}


@pytest.fixture
def manager_client(client, manager):
    client.force_login(manager)
    return client


@pytest.fixture
def other_manager(django_user_model, other_site):
    return make_user(django_user_model, "manager-other", MANAGER, [other_site])

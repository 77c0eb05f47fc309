"""Extra people and records for the access tests: an administrator, a supervisor, stored readings."""
import datetime as dt
from decimal import Decimal

import pytest
from django.utils import timezone

from fleetcare.accounts.roles import ADMINISTRATOR
from fleetcare.readings.services import CellEntry, record_inspection, record_top_up
from tests.conftest import make_user

TAKEN_AT = timezone.make_aware(dt.datetime(2026, 11, 30, 6, 15), dt.timezone.utc)


@pytest.fixture
def administrator(django_user_model, site):
    """An administrator by role (not a Django superuser), member of one site only."""
    return make_user(django_user_model, "admin1", ADMINISTRATOR, [site])


@pytest.fixture
def supervisor_client(client, supervisor):
    client.force_login(supervisor)
    return client


def store_inspection(battery, user, sg="1.272", temp_c=Decimal("30.0"), low_cells=(), taken_at=TAKEN_AT):
    cells = [
        CellEntry(position=p, sg=Decimal(sg), level="low" if p in low_cells else "ok")
        for p in range(1, battery.profile.positions + 1)
    ]
    inspection, _ = record_inspection(battery=battery, user=user, taken_at=taken_at, situation="charged",
                                      cells=cells, temp_c=temp_c)
    return inspection


def store_top_up(battery, user, volume_ml=Decimal("4800.0")):
    top_up, _ = record_top_up(battery=battery, user=user, done_at=TAKEN_AT + dt.timedelta(hours=2),
                              volume_ml=volume_ml, volume_entered="4.8 L")
    return top_up


@pytest.fixture
def inspection(battery, crew):
    return store_inspection(battery, crew)


@pytest.fixture
def top_up(battery, crew):
    return store_top_up(battery, crew)


"""The shared test world: one warehouse with a 24-cell flooded battery, one care residence with a sealed pair."""
import datetime as dt
from decimal import Decimal

import pytest
from django.utils import timezone

from fleetcare.accounts.roles import CREW, MANAGER, SUPERVISOR, ensure_groups
from fleetcare.fleet.models import Battery, BatteryProfile, ChargingRoom, Fitting, Site, Vehicle


@pytest.fixture(scope="session")
def django_db_modify_db_settings(django_db_modify_db_settings_parallel_suffix, tmp_path_factory):
    """On SQLite the test database is a file (not memory), so a test can hand it to a real worker process."""
    from django.conf import settings

    database = settings.DATABASES["default"]
    if database["ENGINE"] == "django.db.backends.sqlite3":
        database.setdefault("TEST", {})["NAME"] = str(tmp_path_factory.mktemp("db") / "test.sqlite3")
        database.setdefault("OPTIONS", {})["init_command"] = "PRAGMA synchronous=OFF"


@pytest.fixture(autouse=True)
def tasks_run_at_once(settings, tmp_path):
    """Tasks run in the test's own thread and transaction (django-tasks' immediate backend: the same task
    code the worker runs); tests of the worker itself switch to the database backend. Uploads go to tmp."""
    settings.TASKS = {"default": {"BACKEND": "django_tasks.backends.immediate.ImmediateBackend"}}
    settings.MEDIA_ROOT = tmp_path / "media"


@pytest.fixture
def site(db):
    return Site.objects.create(name="Test warehouse", code="tw", timezone="Europe/London")


@pytest.fixture
def other_site(db):
    return Site.objects.create(name="Someone else's depot", code="other", timezone="UTC")


@pytest.fixture
def care_site(db):
    return Site.objects.create(name="Test residence", code="tr", kind=Site.Kind.CARE_HOME, timezone="Europe/London")


@pytest.fixture
def room(site):
    return ChargingRoom.objects.create(site=site, name="Room 1", chargers=4, equalizing_chargers=2, airflow_m3h=Decimal("60"))


@pytest.fixture
def traction_profile(db):
    return BatteryProfile.objects.create(
        name="48 V 24-cell 775 Ah", technology="flooded", application="traction", nominal_voltage=48,
        monoblocks=1, cells_per_block=24, capacity_ah=775, full_charge_sg=Decimal("1.290"),
        discharged_sg=Decimal("1.140"), unit_price=Decimal("7800"), weight_kg=Decimal("1350"),
    )


@pytest.fixture
def sealed_profile(db):
    return BatteryProfile.objects.create(
        name="24 V AGM pair", technology="agm", application="mobility", nominal_voltage=24, monoblocks=2,
        cells_per_block=6, capacity_ah=60, capacity_hour_rate=20, watering_allowed=False, equalizing_allowed=False,
    )


@pytest.fixture
def battery(site, traction_profile, room):
    b = Battery.objects.create(serial="TW-001", profile=traction_profile, site=site, charging_room=room,
                               in_service_date=dt.date(2024, 1, 15))
    truck = Vehicle.objects.create(asset_number="FL-01", kind=Vehicle.Kind.COUNTERBALANCE, site=site)
    Fitting.objects.create(battery=b, vehicle=truck, fitted_at=timezone.now() - dt.timedelta(days=30))
    return b


@pytest.fixture
def sealed_battery(care_site, sealed_profile):
    return Battery.objects.create(serial="TR-P01", profile=sealed_profile, site=care_site, in_service_date=dt.date(2025, 6, 1))


@pytest.fixture
def other_battery(other_site, traction_profile):
    return Battery.objects.create(serial="OT-001", profile=traction_profile, site=other_site, in_service_date=dt.date(2024, 1, 1))


def make_user(django_user_model, username, role, sites):
    groups = ensure_groups()
    user = django_user_model.objects.create_user(username=username, password="not-a-real-password-1")
    user.groups.add(groups[role])
    for s in sites:
        s.members.add(user)
    return user


@pytest.fixture
def crew(django_user_model, site, care_site):
    return make_user(django_user_model, "crew1", CREW, [site, care_site])


@pytest.fixture
def supervisor(django_user_model, site, care_site):
    return make_user(django_user_model, "super1", SUPERVISOR, [site, care_site])


@pytest.fixture
def manager(django_user_model, site, care_site):
    return make_user(django_user_model, "manager1", MANAGER, [site, care_site])


@pytest.fixture
def crew_client(client, crew):
    client.force_login(crew)
    return client

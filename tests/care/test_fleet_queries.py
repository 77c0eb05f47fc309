"""The whole-fleet pass reads and writes in a number of queries that does not grow with the fleet."""
import datetime as dt
import math
from decimal import Decimal

import pytest
from django.db import connection
from django.test.utils import CaptureQueriesContext

from fleetcare.care.detection import detect_fleet, load
from fleetcare.care.models import Finding
from fleetcare.fleet.models import Battery, Fitting, Vehicle
from tests.care.helpers import inspect, sgs, water

DAY = dt.timedelta(days=1)
# Fixed whatever the fleet's size; the look-back's readings take up to five of them (fleetcare.care.detection._recent).
MAX_QUERIES = 23


def add_fleet(size, site, care_site, traction_profile, sealed_profile, crew, now):
    """`size` troubled flooded batteries on trucks and `size` sealed pairs, each with a few weeks of readings."""
    for n in range(size):
        b = Battery.objects.create(serial=f"Q-{size}-{n:02d}", profile=traction_profile, site=site,
                                   in_service_date=dt.date(2024, 6, 1))
        truck = Vehicle.objects.create(asset_number=f"QT-{size}-{n:02d}", kind=Vehicle.Kind.PALLET, site=site)
        Fitting.objects.create(battery=b, vehicle=truck, fitted_at=now - 60 * DAY, shift="Night")
        inspect(b, crew, now - 8 * DAY, cells=sgs(low={9: "1.250"}), levels={3: "low"})
        inspect(b, crew, now - DAY, cells=sgs(low={9: "1.248"}))
        inspect(b, crew, now - 2 * DAY, situation="before_charge", scope="pilot", cells={1: Decimal("1.160")})
        water(b, crew, now - 20 * DAY, 20000, before_charge=True)
        water(b, crew, now - 16 * DAY, 20000)
        pair = Battery.objects.create(serial=f"QP-{size}-{n:02d}", profile=sealed_profile, site=care_site,
                                      in_service_date=dt.date(2023, 1, 1))
        inspect(pair, crew, now - DAY, situation="rested", volts={1: "12.80", 2: "12.60"},
                hours_since_charge=Decimal("10"))


def measure(now):
    with CaptureQueriesContext(connection) as first:
        detect_fleet(now=now)
    with CaptureQueriesContext(connection) as rerun:
        found = detect_fleet(now=now + dt.timedelta(hours=1))
    return len(first.captured_queries), len(rerun.captured_queries), found


@pytest.mark.parametrize("size", [2, 8])
def test_the_fleet_pass_stays_within_a_fixed_query_budget(size, site, care_site, traction_profile, sealed_profile,
                                                          crew, now, django_assert_max_num_queries):
    add_fleet(size, site, care_site, traction_profile, sealed_profile, crew, now)
    with django_assert_max_num_queries(MAX_QUERIES):
        detect_fleet(now=now)
    with django_assert_max_num_queries(MAX_QUERIES):
        found = detect_fleet(now=now + dt.timedelta(hours=1))
    per_battery = {(f.battery.serial[:2], f.kind) for f in found}
    assert ("Q-", "weak_cell") in per_battery and ("QP", "weak_block") in per_battery
    assert len([f for f in found if f.kind == "weak_cell"]) == size


def insert_batches(count):
    """INSERT statements bulk_create needs for `count` findings: one on PostgreSQL, one per ~58 on SQLite (999 parameters)."""
    fields = [f for f in Finding._meta.concrete_fields if not f.primary_key]
    size = connection.ops.bulk_batch_size(fields, [None] * count)
    return math.ceil(count / size)


def test_a_fleet_four_times_larger_takes_the_same_number_of_queries(site, care_site, traction_profile, sealed_profile,
                                                                   crew, now):
    add_fleet(2, site, care_site, traction_profile, sealed_profile, crew, now)
    small_first, small_rerun, small = measure(now)
    Finding.objects.all().delete()
    add_fleet(8, site, care_site, traction_profile, sealed_profile, crew, now)
    large_first, large_rerun, large = measure(now)
    assert len(large) > len(small) * 4
    assert large_rerun == small_rerun
    # reads are fixed; only SQLite's parameter limit splits the first run's INSERT of new findings
    assert large_first - insert_batches(len(large)) == small_first - insert_batches(len(small))


def test_a_pass_for_an_earlier_moment_counts_only_what_was_logged_by_then(battery, crew, now):
    for days in (30, 20, 10):
        inspect(battery, crew, now - days * DAY)
    inspect(battery, crew, now - 5 * DAY, situation="before_charge", scope="pilot", cells={1: Decimal("1.160")})
    water(battery, crew, now - 25 * DAY, 9000)
    water(battery, crew, now - 15 * DAY, 9000)

    [today] = load(Battery.objects.filter(pk=battery.pk), now)
    assert (today.charges_logged, today.first_charge_at, today.last_charge_at) == (3, now - 30 * DAY, now - 10 * DAY)
    assert today.last_top_up_at == now - 15 * DAY

    [back_then] = load(Battery.objects.filter(pk=battery.pk), now - 18 * DAY)
    assert (back_then.charges_logged, back_then.first_charge_at, back_then.last_charge_at) == (2, now - 30 * DAY,
                                                                                                 now - 20 * DAY)
    assert back_then.last_top_up_at == now - 25 * DAY


def test_a_battery_with_no_readings_has_no_charges_logged(battery, now):
    [history] = load(Battery.objects.filter(pk=battery.pk), now)
    assert (history.charges_logged, history.first_charge_at, history.last_charge_at, history.last_top_up_at) == (
        0, None, None, None)

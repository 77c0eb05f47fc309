"""The benchmark's fleet is made by SQL; its summary fields must equal what the Python code computes."""
from decimal import Decimal

import pytest
from django.contrib.auth import get_user_model
from django.db import connection

from tools.benchmark import fleet as fleet_data
from fleetcare.readings import state
from fleetcare.readings.models import BatteryState, CellReading, Inspection

pytestmark = pytest.mark.skipif(connection.vendor != "postgresql", reason="the benchmark fleet is generated with PostgreSQL SQL")


@pytest.fixture
def small_fleet(db):
    return fleet_data.build(2, get_user_model())


def test_it_generates_three_years_of_weekly_all_cell_and_daily_pilot_readings(small_fleet):
    assert small_fleet.inspections == 2 * fleet_data.DAYS
    assert Inspection.objects.filter(scope="all").count() == 2 * 157  # days 0, 7, ... 1092
    assert small_fleet.cells == 2 * (157 * 24 + (fleet_data.DAYS - 157))
    assert CellReading.objects.count() == small_fleet.cells


def test_its_sql_summaries_equal_the_python_ones(small_fleet):
    checked, mismatches = fleet_data.verify_sample(count=400)
    assert checked == 400
    assert mismatches == []


def test_its_weak_battery_shows_a_low_cell_9_after_three_years(small_fleet):
    # battery 0 is the first of every 25 to grow a weak cell 9 (0.05 points a day)
    latest = Inspection.objects.filter(battery__serial="B00001", scope="all").order_by("-taken_at").first()
    assert latest.lowest_position == 9
    assert latest.sg_spread > Decimal("0.040")


def test_its_batteries_have_their_kept_state(small_fleet):
    # Written by SQL, so the kept state comes from the rebuild; the pages read it.
    assert BatteryState.objects.count() == 2
    assert state.differences() == {}
    assert BatteryState.objects.get(battery__serial="B00001").charge_count == 157


def test_its_fleet_has_its_findings_before_anything_is_measured(small_fleet):
    # Every part is measured on a fleet in use: the weak battery's finding is open from the start, not only from
    # the round after the findings pass first ran.
    from fleetcare.care.models import Finding

    kinds = set(Finding.objects.active().filter(battery__serial="B00001").values_list("kind", flat=True))
    assert "weak_cell" in kinds or "high_spread" in kinds

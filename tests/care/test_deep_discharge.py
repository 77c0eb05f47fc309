"""Deep discharge: readings in any situation under 20 % state of charge, counted per battery and truck."""
import datetime as dt
from decimal import Decimal

from fleetcare.care.models import Policy
from fleetcare.fleet.models import Battery, Fitting, Vehicle
from tests.care.helpers import detect, inspect, kinds, one

DAY = dt.timedelta(days=1)


def pilot(battery, user, when, sg, situation="before_charge"):
    # SOC is linear in SG between 1.140 and 1.290 (common practice): 1.167 is 18 %, 1.170 is 20 %
    return inspect(battery, user, when, situation=situation, scope="pilot", cells={battery.pilot_cell: Decimal(sg)})


def test_it_fires_under_twenty_percent_and_names_the_truck(battery, crew, watered, now):
    # 20 % state of charge (80 % depth of discharge) is the common-practice floor
    pilot(battery, crew, now - 2 * DAY, "1.167")
    pilot(battery, crew, now - DAY, "1.166", situation="in_use")
    finding = one(detect(battery, now), "deep_discharge")
    assert finding.evidence["event_count"] == 2
    assert finding.evidence["by_truck"] == [{"vehicle": "FL-01", "shift": "", "events": 2}]
    assert finding.evidence["threshold"]["value"] == "20"
    assert "common practice" in finding.evidence["threshold"]["source"]


def test_exactly_twenty_percent_is_a_near_miss(battery, crew, watered, now):
    pilot(battery, crew, now - DAY, "1.170")
    assert detect(battery, now) == []


def test_a_rested_reading_under_twenty_percent_is_a_discharge_event_too(battery, crew, watered, now):
    # Field notes, "Measuring well": any reading under 20 %, at rest, before charge or in use, is a deep discharge.
    pilot(battery, crew, now - DAY, "1.160", situation="rested")
    assert one(detect(battery, now), "deep_discharge").evidence["event_count"] == 1


def test_events_older_than_the_window_clear_it(battery, crew, watered, now):
    pilot(battery, crew, now - 31 * DAY, "1.160")
    assert "deep_discharge" not in kinds(detect(battery, now))


def test_the_floor_follows_policy(battery, crew, watered, now, traction_profile):
    Policy.objects.create(profile=traction_profile, deep_discharge_soc_percent=Decimal("25"))
    pilot(battery, crew, now - DAY, "1.175")  # 23 %
    assert "deep_discharge" in kinds(detect(battery, now))


def test_events_go_to_the_truck_and_shift_fitted_at_the_time(crew, watered, now, site, traction_profile, battery):
    night_truck = Vehicle.objects.create(asset_number="FL-09", kind=Vehicle.Kind.COUNTERBALANCE, site=site)
    spare = Battery.objects.create(serial="TW-002", profile=traction_profile, site=site, in_service_date=dt.date(2025, 1, 1))
    Fitting.objects.create(battery=spare, vehicle=night_truck, fitted_at=now - 20 * DAY, removed_at=now - 10 * DAY,
                           shift="Night")
    Fitting.objects.create(battery=spare, vehicle=battery.fittings.get().vehicle, fitted_at=now - 5 * DAY, shift="Day")
    pilot(spare, crew, now - 15 * DAY, "1.160")
    pilot(spare, crew, now - 12 * DAY, "1.150")
    pilot(spare, crew, now - 2 * DAY, "1.160")
    pilot(spare, crew, now - 8 * DAY, "1.160")  # between fittings: not on a truck
    finding = one(detect(spare, now), "deep_discharge")
    assert finding.evidence["event_count"] == 4
    assert finding.evidence["by_truck"] == [
        {"vehicle": "FL-01", "shift": "Day", "events": 1},
        {"vehicle": "FL-09", "shift": "Night", "events": 2},
        {"vehicle": "not fitted", "shift": "", "events": 1},
    ]

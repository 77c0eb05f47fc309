"""Left discharged: a battery or chair pair found at rest under half charge must be charged now."""
import datetime as dt
from decimal import Decimal

import pytest

from fleetcare.care.models import Finding, Policy
from fleetcare.fleet.models import Battery, BatteryProfile
from tests.care.helpers import detect, inspect, kinds, one

DAY = dt.timedelta(days=1)


@pytest.fixture
def chair_pair(site):
    profile = BatteryProfile.objects.create(
        name="Chair pair 12 V AGM x2", technology="agm", application="mobility", nominal_voltage=Decimal("24"),
        monoblocks=2, cells_per_block=6, capacity_ah=Decimal("73"), watering_allowed=False, equalizing_allowed=False,
    )
    return Battery.objects.create(serial="CH-001", profile=profile, site=site, in_service_date=dt.date(2025, 1, 1))


def test_a_sealed_pair_found_at_11_93_and_11_95_volts_is_urgent_and_a_deep_discharge(chair_pair, crew, now):
    # Sealed 12 V block at rest: 11.80 V empty, 12.00 V 25 % (from memory; maker data rules): 11.94 V a block
    # is 17.5 %: under the 50 % "left discharged" line and the 20 % deep-discharge line (field notes).
    inspect(chair_pair, crew, now - DAY, situation="rested", volts={1: "11.93", 2: "11.95"})
    findings = detect(chair_pair, now)
    left = one(findings, "left_discharged")
    assert left.severity == Finding.Severity.URGENT
    assert "18 %" in left.summary and "charge now" in left.summary
    assert left.evidence["readings"][0]["soc_percent"] == 17.5
    assert left.evidence["threshold"]["value"] == "50"
    assert "deep_discharge" in kinds(findings)
    assert "every night" in one(findings, "deep_discharge").evidence["next_step"]


def test_a_pair_at_rest_above_half_charge_raises_nothing(chair_pair, crew, now):
    # 12.35 V a block: 58.3 % on the sealed table (12.30 V 50 %, 12.60 V 75 %)
    inspect(chair_pair, crew, now - DAY, situation="rested", volts={1: "12.35", 2: "12.35"})
    assert detect(chair_pair, now) == []


def test_a_charge_logged_since_clears_it(chair_pair, crew, now):
    inspect(chair_pair, crew, now - 2 * DAY, situation="rested", volts={1: "12.10", 2: "12.12"})
    assert "left_discharged" in kinds(detect(chair_pair, now))
    inspect(chair_pair, crew, now - DAY, situation="charged", volts={1: "13.20", 2: "13.22"})
    assert "left_discharged" not in kinds(detect(chair_pair, now))


def test_a_voltage_taken_in_use_is_not_a_rest_reading(chair_pair, crew, now):
    inspect(chair_pair, crew, now - DAY, situation="in_use", volts={1: "12.10", 2: "12.12"})
    assert "left_discharged" not in kinds(detect(chair_pair, now))


def test_a_tray_at_rest_under_half_charge_is_a_warning(battery, crew, watered, now):
    # 1.205 on the 1.140-1.290 profile is 43 % (linear in SG, common practice)
    inspect(battery, crew, now - DAY, situation="rested", scope="pilot", cells={battery.pilot_cell: Decimal("1.205")})
    finding = one(detect(battery, now), "left_discharged")
    assert finding.severity == Finding.Severity.WARNING and "43 %" in finding.summary


def test_the_limit_follows_policy(battery, crew, watered, now, traction_profile):
    inspect(battery, crew, now - DAY, situation="rested", scope="pilot", cells={battery.pilot_cell: Decimal("1.215")})
    assert "left_discharged" not in kinds(detect(battery, now))  # 50 %
    Policy.objects.create(profile=traction_profile, left_discharged_soc_percent=Decimal("60"))
    assert "left_discharged" in kinds(detect(battery, now))

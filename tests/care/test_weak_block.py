"""Sealed pairs: rested block voltages more than 0.10 V apart mean a weak block (replace as a pair)."""
import datetime as dt
from decimal import Decimal

from fleetcare.care.models import Policy
from tests.care.helpers import detect, inspect, one

DAY = dt.timedelta(days=1)


def blocks(battery, user, when, one_v, two_v, hours=10, situation="rested"):
    return inspect(battery, user, when, situation=situation, volts={1: one_v, 2: two_v},
                   hours_since_charge=Decimal(hours))


def test_it_names_the_weak_block_and_asks_for_a_pair(sealed_battery, crew, now):
    # more than 0.10 V apart at rest: weak block, replace as a pair (common practice)
    blocks(sealed_battery, crew, now - DAY, "12.80", "12.69")
    finding = one(detect(sealed_battery, now), "weak_block")
    assert finding.positions == [2]
    assert finding.position_label == "block 2"
    assert "pair" in finding.evidence["next_step"]
    assert finding.evidence["readings"][0]["gap_v"] == 0.11


def test_a_gap_of_exactly_a_tenth_of_a_volt_is_a_near_miss(sealed_battery, crew, now):
    blocks(sealed_battery, crew, now - DAY, "12.80", "12.70")
    assert detect(sealed_battery, now) == []


def test_a_reading_sooner_than_the_rest_time_is_not_used(sealed_battery, crew, now):
    # the profile asks for 4 h of rest (common practice: several hours)
    blocks(sealed_battery, crew, now - 2 * DAY, "12.80", "12.78")
    blocks(sealed_battery, crew, now - DAY, "13.20", "12.90", hours=2)
    assert detect(sealed_battery, now) == []


def test_the_skipped_reading_is_named_in_the_evidence(sealed_battery, crew, now):
    blocks(sealed_battery, crew, now - 2 * DAY, "12.80", "12.60")
    blocks(sealed_battery, crew, now - DAY, "13.20", "12.90", hours=2)
    finding = one(detect(sealed_battery, now), "weak_block")
    assert "not used" in finding.evidence["readings"][-1]["not_rested"]


def test_two_rested_readings_in_a_row_make_it_persistent(sealed_battery, crew, now):
    blocks(sealed_battery, crew, now - 15 * DAY, "12.80", "12.65")
    blocks(sealed_battery, crew, now - DAY, "12.80", "12.62")
    assert one(detect(sealed_battery, now), "weak_block").persistent is True


def test_the_gap_follows_policy(sealed_battery, crew, now, sealed_profile):
    Policy.objects.create(profile=sealed_profile, block_ocv_gap_v=Decimal("0.15"))
    blocks(sealed_battery, crew, now - DAY, "12.80", "12.69")
    assert detect(sealed_battery, now) == []

"""Suspected sulfation: short of full charge after charging, standing half-charged, spares left uncharged."""
import datetime as dt
from decimal import Decimal

from fleetcare.care.models import Policy
from fleetcare.fleet.models import Battery
from tests.care.helpers import detect, inspect, kinds, one, sgs

DAY = dt.timedelta(days=1)


def test_it_fires_when_two_post_charge_readings_in_a_row_fall_short_of_full_charge(battery, crew, watered, now):
    # mean 1.255 is 0.035 under the profile's 1.290: over the 0.030 default (common practice)
    inspect(battery, crew, now - 8 * DAY, cells=sgs(value="1.255"))
    inspect(battery, crew, now - DAY, cells=sgs(value="1.255"))
    finding = one(detect(battery, now), "sulfation")
    assert "2 post-charge readings in a row" in finding.summary
    assert [r["short_points"] for r in finding.evidence["readings"]] == [35, 35]
    assert finding.evidence["threshold"]["value"] == "0.030"


def test_one_short_charge_is_not_enough(battery, crew, watered, now):
    inspect(battery, crew, now - 8 * DAY, cells=sgs())
    inspect(battery, crew, now - DAY, cells=sgs(value="1.255"))
    assert "sulfation" not in kinds(detect(battery, now))


def test_exactly_thirty_points_short_is_a_near_miss(battery, crew, watered, now):
    inspect(battery, crew, now - 8 * DAY, cells=sgs(value="1.260"))
    inspect(battery, crew, now - DAY, cells=sgs(value="1.260"))
    assert detect(battery, now) == []


def test_short_after_an_equalizing_charge_fires_at_once(battery, crew, watered, now):
    inspect(battery, crew, now - DAY, situation="equalized", cells=sgs(value="1.255"))
    finding = one(detect(battery, now), "sulfation")
    assert "after an equalizing charge" in finding.summary


def test_the_streak_length_follows_policy(battery, crew, watered, now, traction_profile):
    Policy.objects.create(profile=traction_profile, sulfation_inspections=3)
    inspect(battery, crew, now - 8 * DAY, cells=sgs(value="1.255"))
    inspect(battery, crew, now - DAY, cells=sgs(value="1.255"))
    assert "sulfation" not in kinds(detect(battery, now))
    inspect(battery, crew, now, cells=sgs(value="1.255"))
    assert "sulfation" in kinds(detect(battery, now))


def rested(battery, crew, when, sg):
    # SG 1.200 on the 1.140–1.290 profile is 40 % state of charge (linear in SG, common practice)
    return inspect(battery, crew, when, situation="rested", scope="pilot", cells={1: Decimal(sg)})


def test_standing_below_half_charge_for_more_than_three_days_fires(battery, crew, watered, now):
    # below 50 % for days is a sulfation sign (common practice); 3 days is the FleetCare default
    rested(battery, crew, now - 4 * DAY - dt.timedelta(hours=1), "1.200")
    rested(battery, crew, now - DAY, "1.200")
    finding = one(detect(battery, now), "sulfation")
    assert "below 50 % state of charge for 3 days" in finding.summary
    assert finding.evidence["readings"][0]["soc_percent"] == 40.0


def test_three_days_exactly_below_half_charge_is_a_near_miss(battery, crew, watered, now):
    rested(battery, crew, now - 4 * DAY, "1.200")
    rested(battery, crew, now - DAY, "1.200")
    assert kinds(detect(battery, now)) == ["left_discharged"]  # found at rest at 40 %: charge now, not yet sulfation


def test_a_charge_in_between_breaks_the_run(battery, crew, watered, now):
    rested(battery, crew, now - 6 * DAY, "1.200")
    inspect(battery, crew, now - 4 * DAY, cells=sgs())
    rested(battery, crew, now - DAY, "1.200")
    assert kinds(detect(battery, now)) == ["left_discharged"]  # found at rest at 40 %: charge now, not yet sulfation


def test_a_spare_without_a_charge_for_over_thirty_days_fires(battery, crew, watered, now):
    # stored wet batteries need a charge every 30 days: US Army TM 5-1185 series (from memory)
    Battery.objects.filter(pk=battery.pk).update(status=Battery.Status.SPARE)
    inspect(battery, crew, now - 31 * DAY, cells=sgs())
    finding = one(detect(battery, now), "sulfation")
    assert "no charge logged for 31 days" in finding.summary
    assert "TM 5-1185" in finding.evidence["threshold"]["source"]


def test_a_spare_charged_twenty_nine_days_ago_is_fine(battery, crew, watered, now):
    Battery.objects.filter(pk=battery.pk).update(status=Battery.Status.SPARE)
    inspect(battery, crew, now - 29 * DAY, cells=sgs())
    assert detect(battery, now) == []


def test_the_storage_interval_follows_the_site_policy(battery, crew, watered, now, site):
    Battery.objects.filter(pk=battery.pk).update(status=Battery.Status.SPARE)
    Policy.objects.create(site=site, storage_charge_days=45)
    inspect(battery, crew, now - 31 * DAY, cells=sgs())
    assert detect(battery, now) == []

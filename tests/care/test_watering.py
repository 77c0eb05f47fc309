"""Watering: low level, overdue watering, water use above the band (as overcharge by Faraday's law), early water."""
import datetime as dt
from decimal import Decimal

import pytest
from scipy import constants

from fleetcare.care.models import Policy
from fleetcare.fleet.models import Battery
from fleetcare.planner.models import Policy as PlanningPolicy
from tests.care.helpers import detect, inspect, kinds, one, sgs, water

DAY = dt.timedelta(days=1)
# Faraday's law: 1 Ah splits 3600 C / F / 2 mol of water at 18.015 g/mol, about 0.336 g (field notes);
# computed here from CODATA's Faraday constant in scipy.constants, independently of fleetcare.chemistry
WATER_G_PER_AH = 3600 / constants.physical_constants["Faraday constant"][0] / 2 * 18.015


def test_it_reports_low_cells_until_water_is_logged(battery, crew, now):
    water(battery, crew, now - 3 * DAY, 1000)
    inspect(battery, crew, now - DAY, cells=sgs(), levels={5: "low", 12: "low"})
    finding = one(detect(battery, now), "low_level")
    assert finding.positions == [5, 12]
    assert finding.evidence["caution"] == "water"  # the water caution of the one cautions template
    water(battery, crew, now - dt.timedelta(hours=2), 900)
    assert "low_level" not in kinds(detect(battery, now))


def test_a_later_ok_level_for_the_same_cell_clears_it(battery, crew, watered, now):
    inspect(battery, crew, now - DAY, cells=sgs(), levels={5: "low"})
    inspect(battery, crew, now, cells=sgs())
    assert "low_level" not in kinds(detect(battery, now))


def test_watering_is_overdue_the_day_after_the_planners_interval(battery, crew, now):
    water(battery, crew, now - 8 * DAY, 1000)
    finding = one(detect(battery, now), "watering_overdue")
    assert "8 days ago (interval 7 days)" in finding.summary
    assert finding.evidence["threshold"]["name"] == "water_every_days"
    assert finding.evidence["threshold"]["value"] == "7"


def test_watering_due_today_is_not_yet_overdue(battery, crew, now):
    water(battery, crew, now - 7 * DAY, 1000)
    assert detect(battery, now) == []


def test_the_watering_interval_follows_the_planning_policy(battery, crew, now, traction_profile):
    PlanningPolicy.objects.create(profile=traction_profile, water_every_days=21)
    water(battery, crew, now - 15 * DAY, 1000)
    assert detect(battery, now) == []


def test_a_battery_never_watered_counts_from_its_first_day_in_service(battery, now):
    Battery.objects.filter(pk=battery.pk).update(in_service_date=now.date() - 10 * DAY)
    battery.refresh_from_db()
    finding = one(detect(battery, now), "watering_overdue")
    assert "no top-up logged since it went into service" in finding.summary
    Battery.objects.filter(pk=battery.pk).update(in_service_date=now.date() - 6 * DAY)
    battery.refresh_from_db()
    assert "watering_overdue" not in kinds(detect(battery, now))


def test_sealed_batteries_are_never_due_for_water(sealed_battery, now):
    assert detect(sealed_battery, now) == []


def weekly_water(battery, crew, now, ml_per_cell_month):
    """Five weekly top-ups; the last four carry 28 days of water at the given monthly rate."""
    per_top_up = ml_per_cell_month * 28 / 30 / 4 * battery.profile.cell_count
    for week in range(4, -1, -1):
        water(battery, crew, now - week * 7 * DAY, round(per_top_up, 1))


def band(percent, capacity_ah=775, charges_per_month=30):
    """mL of water per cell per month that `percent` % of the rating as overcharge per charge splits."""
    return percent / 100 * capacity_ah * charges_per_month * WATER_G_PER_AH


def test_water_use_above_the_band_is_reported_as_overcharge_ah(battery, crew, now):
    # 13 % of 775 Ah per charge, one charge a day: over the 12 % band (common practice, 115 % charge return at 80 % DoD)
    weekly_water(battery, crew, now, band(13))
    finding = one(detect(battery, now), "high_water_use")
    assert finding.evidence["estimated_overcharge_ah_per_month"] == pytest.approx(0.13 * 775 * 30, abs=1)
    assert finding.evidence["overcharge_percent_of_rating_per_charge"] == pytest.approx(13.0, abs=0.1)
    assert finding.evidence["water_g_per_ah"] == pytest.approx(0.336, abs=0.0005)
    assert finding.evidence["band_ml_per_cell_month"] == pytest.approx(band(12), abs=0.1)
    assert "Faraday" in finding.evidence["threshold"]["source"]


def test_water_use_just_inside_the_band_is_quiet(battery, crew, now):
    weekly_water(battery, crew, now, band(11.9))
    assert detect(battery, now) == []


def test_the_water_band_scales_with_the_sites_charges_per_day(battery, crew, now, site):
    site.charges_per_day = Decimal("2")
    site.save()
    weekly_water(battery, crew, now, band(13))  # 13 % at one charge a day is 6.5 % at two
    assert "high_water_use" not in kinds(detect(battery, now))


def test_water_before_charging_with_no_low_level_reported_is_noted(battery, crew, now):
    water(battery, crew, now - DAY, 800, before_charge=True)
    finding = one(detect(battery, now), "water_before_charge")
    assert finding.severity == 1
    assert "after charging" in finding.evidence["next_step"]


def test_water_before_charging_after_a_low_level_report_is_fine(battery, crew, now):
    inspect(battery, crew, now - DAY - dt.timedelta(hours=2), situation="before_charge", cells=sgs(value="1.200"),
            levels={7: "low"})
    water(battery, crew, now - DAY, 800, before_charge=True)
    assert "water_before_charge" not in kinds(detect(battery, now))

"""Ageing: past the profile's design life, or estimated cycles past its design cycles."""
import datetime as dt
from decimal import Decimal

from fleetcare.care.models import Finding
from fleetcare.fleet.models import Battery
from tests.care.helpers import detect, inspect, kinds, one, sgs


def in_service_days_ago(battery, days, now):
    Battery.objects.filter(pk=battery.pk).update(in_service_date=now.date() - dt.timedelta(days=days))
    battery.refresh_from_db()


def test_a_battery_past_its_design_life_is_flagged(battery, site, watered, now):
    site.charges_per_day = Decimal("0.5")
    site.save()
    in_service_days_ago(battery, int(5.1 * 365.25), now)
    finding = one(detect(battery, now), "ageing")
    assert finding.severity == Finding.Severity.INFO
    assert "in service 5.1 years (design life 5.0 years)" in finding.summary
    assert "capacity test" in finding.evidence["next_step"]


def test_just_inside_the_design_life_is_quiet(battery, site, watered, now):
    site.charges_per_day = Decimal("0.5")
    site.save()
    in_service_days_ago(battery, int(4.99 * 365.25), now)
    assert detect(battery, now) == []


def test_cycles_are_estimated_from_the_sites_charges_per_day(battery, watered, now):
    in_service_days_ago(battery, 1501, now)  # one charge a day: 1501 cycles against 1500
    finding = one(detect(battery, now), "ageing")
    assert "about 1,501 charges (design 1,500 cycles)" in finding.summary
    in_service_days_ago(battery, 1499, now)
    assert "ageing" not in kinds(detect(battery, now))


def test_logged_charges_count_when_they_are_more(battery, crew, site, watered, now, traction_profile):
    site.charges_per_day = Decimal("0")
    site.save()
    in_service_days_ago(battery, 3, now)  # logged from the first day in service
    traction_profile.design_cycles = 2
    traction_profile.save()
    for days in (3, 2):
        inspect(battery, crew, now - dt.timedelta(days=days), cells=sgs())
    assert "ageing" not in kinds(detect(battery, now))
    inspect(battery, crew, now - dt.timedelta(days=1), cells=sgs())
    finding = one(detect(battery, now), "ageing")
    assert finding.evidence["readings"][0]["cycles_logged"] == 3

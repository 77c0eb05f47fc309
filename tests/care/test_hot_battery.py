"""Hot battery: any electrolyte temperature over the absolute limit (default 55 °C, from memory; the maker's data
rules) opens an urgent finding that says what to check."""
import datetime as dt
from decimal import Decimal

from fleetcare.care.models import Finding, Policy
from fleetcare.readings.services import CellEntry, record_inspection
from tests.care.helpers import detect, kinds, one, sgs

DAY = dt.timedelta(days=1)


def read_at(battery, user, when, temp_c, cell_temps=None):
    cells = [CellEntry(position=p, sg=sg, temp_c=(cell_temps or {}).get(p)) for p, sg in sgs().items()]
    record_inspection(battery=battery, user=user, taken_at=when, situation="charged", cells=cells,
                      temp_c=Decimal(temp_c))


def test_a_reading_at_56_degrees_opens_an_urgent_finding(battery, crew, watered, now):
    read_at(battery, crew, now - DAY, "56.0")
    finding = one(detect(battery, now), "hot_battery")
    assert finding.severity == Finding.Severity.URGENT
    assert "56 °C" in finding.summary and "limit 55 °C" in finding.summary
    assert "charger" in finding.evidence["next_step"] and "ventilation" in finding.evidence["next_step"]
    assert finding.evidence["caution"] == "hot"  # the hot-battery caution of the one cautions template


def test_55_degrees_is_not_over_the_limit(battery, crew, watered, now):
    read_at(battery, crew, now - DAY, "55.0")
    assert "hot_battery" not in kinds(detect(battery, now))


def test_one_hot_cell_counts_and_is_named(battery, crew, watered, now):
    read_at(battery, crew, now - DAY, "40.0", cell_temps={7: Decimal("58.0")})
    finding = one(detect(battery, now), "hot_battery")
    assert "cell 7" in finding.summary


def test_it_speaks_the_sites_unit(battery, crew, watered, now, site):
    site.temp_unit = "F"
    site.save()
    read_at(battery, crew, now - DAY, "60.0")
    assert "140 °F" in one(detect(battery, now), "hot_battery").summary


def test_the_limit_follows_policy_and_old_readings_clear(battery, crew, watered, now, traction_profile):
    read_at(battery, crew, now - DAY, "52.0")
    assert "hot_battery" not in kinds(detect(battery, now))
    Policy.objects.create(profile=traction_profile, hot_battery_temp_c=Decimal("50"))
    assert "hot_battery" in kinds(detect(battery, now))
    assert "hot_battery" not in kinds(detect(battery, now + 31 * DAY))

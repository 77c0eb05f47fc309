"""The ageing finding and the replacement forecast state one charge count for the same battery."""
from django.core.management import call_command
from django.utils import timezone

from fleetcare.budget import forecast
from fleetcare.budget.selectors import battery_facts
from fleetcare.care import detection, rules
from fleetcare.care.models import Finding
from fleetcare.fleet.models import Battery


def test_the_ageing_finding_and_the_forecast_count_the_same_charges_on_the_demo(db):
    call_command("demo", "--no-serve", stdout=None)
    now = timezone.now()
    today = now.date()
    batteries = Battery.objects.active()
    histories = {h.battery.pk: h for h in detection.load(batteries, now)}
    facts = battery_facts(batteries, today)
    assert len(facts) == len(histories) > 30
    for f in facts:
        by_finding = rules.charge_count(histories[f.battery_id])
        by_forecast = forecast.charge_count(f, today)
        assert (f.serial, by_finding) == (f.serial, by_forecast)
    detection.detect_fleet(now=now)
    ageing = {a.battery.serial: a for a in Finding.objects.active().filter(kind="ageing").select_related("battery")}
    forecasts = {f.serial: f for f in facts}
    assert any("charges (design" in a.summary for a in ageing.values()), "some demo battery is past its cycles"
    for serial, finding in ageing.items():
        stated = finding.evidence["readings"][0]["cycles_estimated"]
        count = forecast.charge_count(forecasts[serial], today)
        assert stated == count.whole
        if "charges" in finding.summary:  # past its design cycles, not only its years
            assert f"about {count.whole:,} charges (design" in finding.summary
        assert f"about {count.whole:,} charges so far" in forecast.cycles_evidence(forecasts[serial], today,
                                                                                  forecast.Rules()).detail

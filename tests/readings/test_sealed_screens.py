"""Sealed blocks on screen: the sealed version of the one cautions template, no hydrometer, electrolyte or
watering advice, and no "Just equalized" on any path (form, CSV import, the tablet's limits; the API in
tests/api/test_inspections.py)."""
import json
import re
import uuid

import pytest
from django.urls import reverse
from django.utils import timezone

from fleetcare.care.models import Finding
from fleetcare.fleet.models import Battery
from fleetcare.readings import validation
from fleetcare.readings.csv_io import import_readings
from fleetcare.readings.models import Inspection

FLOODED_ADVICE = re.compile(r"hydrometer|electrolyte|acid|top up|top-up|distilled|level mark|Just equalized|face shield",
                            re.IGNORECASE)


def visible_text(html):
    """What a person reads: no scripts, JSON data or tags."""
    html = re.sub(r"<script.*?</script>", "", html, flags=re.S)
    return re.sub(r"<[^>]+>", " ", html)


def sealed_post(**extra):
    return {"situation": "rested", "scope": "all", "taken_at": timezone.localtime().strftime("%Y-%m-%dT%H:%M"),
            "temp": "21", "hours_since_charge": "12", "client_uuid": str(uuid.uuid4()),
            "volts_1": "12.71", "volts_2": "12.69"} | extra


def test_a_sealed_batterys_entry_screen_has_the_sealed_cautions_and_no_flooded_advice(crew_client, sealed_battery):
    html = crew_client.get(reverse("readings:inspect", args=[sealed_battery.pk])).content.decode()
    text = visible_text(html)
    assert "never add water and never open or remove the valves" in text
    assert "explosive hydrogen" in text and "licensed lead recycler" in text and "safety officer" in text
    assert FLOODED_ADVICE.findall(text) == []
    assert 'value="equalized"' not in html


def test_a_flooded_batterys_entry_screen_keeps_the_flooded_cautions_and_just_equalized(crew_client, battery):
    html = crew_client.get(reverse("readings:inspect", args=[battery.pk])).content.decode()
    assert "Sulfuric acid burns" in html and "never add water" not in html
    assert '<option value="equalized"' in html


def test_a_sealed_finding_shows_the_sealed_cautions(crew_client, sealed_battery):
    now = timezone.now()
    finding = Finding.objects.create(battery=sealed_battery, kind="weak_block", opened_at=now, last_seen_at=now,
                                     summary="Block 2 rests 0.20 V below its partner",
                                     evidence={"rule": "r", "caution": "replace", "readings": [], "thresholds": []})
    text = visible_text(crew_client.get(reverse("care:finding", args=[finding.pk])).content.decode())
    assert "Replace blocks as a matched pair" in text and "never add water" in text
    assert FLOODED_ADVICE.findall(text) == []


def test_the_form_refuses_just_equalized_for_a_sealed_battery(crew_client, sealed_battery):
    response = crew_client.post(reverse("readings:inspect", args=[sealed_battery.pk]), sealed_post(situation="equalized"))
    assert response.context["form"].errors["situation"] == [validation.SEALED_NOT_EQUALIZED]
    assert not Inspection.objects.exists()


def test_the_csv_import_refuses_just_equalized_for_a_sealed_battery(sealed_battery, crew):
    text = ("serial,taken_at,situation,cell,sg,temp,volts,level\n"
            "TR-P01,2026-11-02T06:00,equalized,1,,,12.80,\nTR-P01,2026-11-02T06:00,equalized,2,,,12.82,\n")
    report = import_readings(text, user=crew, batteries=Battery.objects.all())
    assert report.errors == [(2, validation.SEALED_NOT_EQUALIZED), (3, validation.SEALED_NOT_EQUALIZED)]
    assert not Inspection.objects.exists()


def test_the_tablet_gets_the_situations_it_may_offer(crew_client, sealed_battery, battery):
    def limits(b):
        html = crew_client.get(reverse("readings:inspect", args=[b.pk])).content.decode()
        return json.loads(re.search(r'<script id="fc-limits" type="application/json">(.*?)</script>', html, re.S)[1])

    assert "equalized" not in limits(sealed_battery)["situations"]
    assert "equalized" in limits(battery)["situations"]
    assert limits(sealed_battery)["sealedNotEqualized"] == validation.SEALED_NOT_EQUALIZED


@pytest.mark.parametrize("template", ["readings/top_up.html", "planner/equalizing.html", "planner/week.html",
                                      "budget/budget.html", "budget/capacity_tests.html", "readings/inspect.html",
                                      "care/_finding.html"])
def test_every_screen_with_cautions_includes_the_one_template(template):
    from django.template.loader import get_template

    source = get_template(template).template.source
    assert '{% include "partials/cautions.html"' in source
    assert "face shield" not in source and "hydrogen" not in source


def test_a_sealed_batterys_record_page_gives_no_flooded_advice(crew_client, sealed_battery):
    text = visible_text(crew_client.get(reverse("fleet:battery", args=[sealed_battery.pk])).content.decode())
    assert FLOODED_ADVICE.findall(text) == []

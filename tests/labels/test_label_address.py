"""The address a label's QR code holds: it opens the battery's entry screen, or says why it opens nothing."""
import datetime as dt
import urllib.parse

import pytest
from django.urls import reverse

from fleetcare.fleet.models import Battery
from fleetcare.labels import selectors


def label(site_code, serial):
    return reverse("labels:battery", args=[site_code, serial])


def test_a_label_of_one_of_your_batteries_opens_its_entry_screen_marked_as_scanned(crew_client, battery):
    response = crew_client.get(label("tw", "TW-001"))
    assert response.status_code == 302
    assert response["Location"] == reverse("readings:inspect", args=[battery.pk]) + "?via=scan"


def test_a_serial_with_a_slash_round_trips(crew_client, site, traction_profile):
    pair = Battery.objects.create(serial="TW/7", profile=traction_profile, site=site, in_service_date=dt.date(2024, 1, 1))
    assert crew_client.get(label("tw", "TW/7"))["Location"].startswith(reverse("readings:inspect", args=[pair.pk]))


def test_a_label_of_another_site_opens_nothing_and_says_so(crew_client, other_battery):
    response = crew_client.get(label("other", "OT-001"))
    assert response.status_code == 404
    assert "This label is for a battery of another site (“other”)" in response.content.decode()
    assert f"/readings/battery/{other_battery.pk}/" not in response.content.decode()


def test_a_retired_batterys_label_opens_nothing_and_says_so(crew_client, battery):
    Battery.objects.filter(pk=battery.pk).update(status=Battery.Status.RETIRED)
    response = crew_client.get(label("tw", "TW-001"))
    assert response.status_code == 410
    assert "TW-001 was retired: it takes no more readings" in response.content.decode()


def test_an_unknown_serial_at_your_site_opens_nothing(crew_client, battery):
    response = crew_client.get(label("tw", "TW-0001"))
    assert response.status_code == 404
    assert "There is no battery TW-0001 at your site “Test warehouse”" in response.content.decode()


def test_the_serial_decides_not_the_site_printed_on_the_label(crew_client, battery):
    """A battery moved to another of your sites keeps opening from its old label."""
    assert crew_client.get(label("tr", "TW-001"))["Location"].startswith(reverse("readings:inspect", args=[battery.pk]))


@pytest.mark.parametrize("site_code, serial, kind", [
    ("tw", "TW-001", selectors.OPEN), ("other", "OT-001", selectors.OTHER_SITE), ("tw", "NOPE", selectors.UNKNOWN),
    ("other", "NOPE", selectors.OTHER_SITE), ("tw", "TW-GONE", selectors.RETIRED),
])
def test_the_scan_screens_facts_give_the_same_answer_as_the_address(crew, battery, other_battery, traction_profile, site,
                                                                    site_code, serial, kind):
    Battery.objects.create(serial="TW-GONE", profile=traction_profile, site=site, status=Battery.Status.RETIRED,
                           in_service_date=dt.date(2015, 1, 1))
    assert selectors.resolve_label(crew, site_code, serial).kind == kind
    data = selectors.scan_data(crew, "https://fleetcare.example.com")
    # The same judgement as static/js/scan.js makes from these facts:
    known = data["batteries"].get(serial)
    js_kind = (selectors.RETIRED if known["retired"] else selectors.OPEN) if known else (
        selectors.UNKNOWN if site_code in data["sites"] else selectors.OTHER_SITE)
    assert js_kind == kind
    assert "OT-001" not in data["batteries"]  # nothing of another site reaches the tablet


def test_the_scan_screen_brings_its_facts_and_the_decoder_and_no_inline_code(crew_client, battery, other_battery):
    html = crew_client.get(reverse("labels:scan")).content.decode()
    assert '<script id="scan-data" type="application/json">' in html
    assert "TW-001" in html and "OT-001" not in html
    assert 'data-jsqr="/static/vendor/jsqr/jsQR.js"' in html


def test_the_find_page_offers_scanning_and_keeps_typed_search(crew_client, battery):
    html = crew_client.get(reverse("readings:find")).content.decode()
    assert 'href="/labels/scan/"' in html and 'name="q"' in html


def test_after_an_equalizing_charge_a_label_opens_todays_task_with_just_equalized_chosen(crew_client, crew, battery, site):
    """As today's work opens the all-cell reading after equalizing; both the address and the scan screen's facts."""
    from django.utils import timezone

    from fleetcare.planner import selectors as planner_selectors
    from fleetcare.planner.models import EqualizingCharge

    plain = reverse("readings:inspect", args=[battery.pk]) + "?via=scan"
    ended = timezone.now() - dt.timedelta(hours=1)
    EqualizingCharge.objects.create(battery=battery, started_at=ended - dt.timedelta(hours=3), ended_at=ended, by=crew)
    crew_client.cookies["fc_site"] = site.code
    today = crew_client.get(reverse("planner:today", args=[site.code])).context["day"]
    task = next(t for t in today.tasks if t.battery.pk == battery.pk and t.situation == "equalized")
    opened = crew_client.get(label("tw", "TW-001"))["Location"]
    assert opened == plain + "&scope=all&situation=equalized"
    as_task = urllib.parse.urlsplit(task.entry_url)
    assert (as_task.path, {**urllib.parse.parse_qs(as_task.query), "via": ["scan"]}) == \
        (urllib.parse.urlsplit(opened).path, urllib.parse.parse_qs(urllib.parse.urlsplit(opened).query))
    assert selectors.scan_data(crew, "https://fleetcare.example.com")["batteries"]["TW-001"]["url"] == opened
    assert crew_client.get(opened).context["form"]["situation"].value() == "equalized"
    # Read all cells "Just equalized": the task is done, and the label opens the plain entry screen again.
    from fleetcare.readings.services import CellEntry, record_inspection
    from decimal import Decimal

    record_inspection(battery=battery, user=crew, taken_at=timezone.now(), situation="equalized", temp_c=Decimal("25"),
                      cells=[CellEntry(position=n, sg=Decimal("1.285")) for n in range(1, 25)])
    assert crew_client.get(label("tw", "TW-001"))["Location"] == plain
    assert planner_selectors.just_equalized(Battery.objects.all()) == set()

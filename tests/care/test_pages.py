"""The findings list, the finding page, acknowledgement by supervisors, and the panels on other pages."""
import datetime as dt
from decimal import Decimal

import pytest
from django.urls import reverse
from django.utils import timezone

from fleetcare.care.models import Finding
from tests.care.helpers import detect, inspect, sgs


@pytest.fixture
def weak(battery, crew, watered):
    inspection = inspect(battery, crew, timezone.now() - dt.timedelta(hours=6), cells=sgs(low={9: "1.245"}))
    detect(battery, timezone.now())
    return Finding.objects.get(battery=battery, kind="weak_cell"), inspection


@pytest.fixture
def elsewhere(other_battery, now):
    return Finding.objects.create(battery=other_battery, kind="ageing", opened_at=now, last_seen_at=now,
                                  summary="Past design life: far away", evidence={"rule": "r", "readings": []})


def test_the_list_needs_a_sign_in(client, db):
    response = client.get(reverse("care:findings"))
    assert response.status_code == 302 and "/login/" in response.url


def test_crew_see_their_sites_findings_and_not_others(crew_client, weak, elsewhere):
    response = crew_client.get(reverse("care:findings"))
    assert response.status_code == 200
    body = response.content.decode()
    assert "Cell 9 read low after charging" in body and "far away" not in body
    assert crew_client.get(reverse("care:finding", args=[elsewhere.pk])).status_code == 404


def test_the_list_filters_by_site_kind_battery_and_state(crew_client, weak, sealed_battery, now):
    Finding.objects.create(battery=sealed_battery, kind="ageing", opened_at=now, last_seen_at=now, summary="Old pair",
                           evidence={})
    Finding.objects.create(battery=sealed_battery, kind="weak_block", opened_at=now, last_seen_at=now,
                           state="cleared", cleared_at=now, summary="Gone block", evidence={})
    url = reverse("care:findings")

    def shown(**params):
        body = crew_client.get(url, params).content.decode()
        return {s for s in ("Cell 9 read low", "Old pair", "Gone block", "Spread 40 points") if s in body}

    assert shown() == {"Cell 9 read low", "Old pair", "Spread 40 points"}
    assert shown(site="tr") == {"Old pair"}
    assert shown(kind="weak_cell") == {"Cell 9 read low"}
    assert shown(battery="tw-00") == {"Cell 9 read low", "Spread 40 points"}
    assert shown(state="cleared") == {"Gone block"}
    assert shown(state="all", site="tr") == {"Old pair", "Gone block"}


def test_a_finding_explains_itself(crew_client, weak):
    finding, _ = weak
    body = crew_client.get(reverse("care:finding", args=[finding.pk])).content.decode()
    assert "On a just-charged or just-equalized battery" in body  # the rule
    assert "cell 9: <strong>1.245, 40 points below" in body  # the reading used
    assert "0.030 SG" in body and "common practice (field notes)" in body  # threshold and source
    assert "Give an equalizing charge" in body  # what to do next
    assert "Equalizing gives off more hydrogen" in body and "Sulfuric acid burns" in body  # cautions


def test_crew_cannot_acknowledge(crew_client, weak):
    finding, _ = weak
    response = crew_client.post(reverse("care:acknowledge", args=[finding.pk]), {"comment": "seen"})
    assert response.status_code == 403
    finding.refresh_from_db()
    assert finding.state == Finding.State.OPEN


def test_a_supervisor_acknowledges_with_a_comment(client, supervisor, weak):
    finding, _ = weak
    client.force_login(supervisor)
    response = client.post(reverse("care:acknowledge", args=[finding.pk]), {"comment": "Cell swap booked for Tuesday."})
    assert response.status_code == 302
    finding.refresh_from_db()
    assert finding.state == Finding.State.ACKNOWLEDGED
    assert finding.acknowledged_by == supervisor and finding.acknowledged_comment == "Cell swap booked for Tuesday."
    assert "Cell swap booked for Tuesday." in client.get(reverse("care:finding", args=[finding.pk])).content.decode()


def test_an_acknowledgement_needs_a_comment(client, supervisor, weak):
    finding, _ = weak
    client.force_login(supervisor)
    response = client.post(reverse("care:acknowledge", args=[finding.pk]), {"comment": "  "})
    assert response.status_code == 400
    finding.refresh_from_db()
    assert finding.state == Finding.State.OPEN


def test_a_supervisor_cannot_acknowledge_another_sites_finding(client, supervisor, elsewhere):
    client.force_login(supervisor)
    assert client.post(reverse("care:acknowledge", args=[elsewhere.pk]), {"comment": "x"}).status_code == 404


def test_a_supervisor_can_check_the_fleet_now(client, supervisor, battery, crew, watered):
    inspect(battery, crew, timezone.now() - dt.timedelta(hours=2), cells=sgs(low={9: "1.245"}))
    client.force_login(supervisor)
    response = client.post(reverse("care:check_now"), follow=True)  # tests run tasks at once (tests/conftest.py)
    assert "Checking 1 battery in the background" in response.content.decode()
    assert Finding.objects.filter(battery=battery).count() == 2


def test_crew_cannot_run_the_fleet_check(crew_client, db):
    assert crew_client.post(reverse("care:check_now")).status_code == 403


def test_the_battery_record_shows_its_findings(crew_client, weak, battery):
    body = crew_client.get(reverse("fleet:battery", args=[battery.pk])).content.decode()
    assert "Cell 9 read low after charging" in body and "2 open" in body


def test_the_battery_record_says_so_when_there_are_none(crew_client, sealed_battery):
    body = crew_client.get(reverse("fleet:battery", args=[sealed_battery.pk])).content.decode()
    assert "No open findings." in body


def test_the_inspection_page_shows_the_findings(crew_client, weak):
    _, inspection = weak
    body = crew_client.get(reverse("readings:inspection", args=[inspection.pk])).content.decode()
    assert "Findings for this battery" in body and "Cell 9 read low after charging" in body


def test_the_menu_links_to_findings(crew_client, db):
    assert reverse("care:findings") in crew_client.get(reverse("fleet:batteries")).content.decode()


def test_the_admin_shows_each_default_with_its_source(admin_client):
    body = admin_client.get(reverse("admin:care_policy_add")).content.decode()
    assert "US Army TM 9-6140-200-14 (from memory of its text)" in body
    assert "US Army TM 5-1185 series: stored wet batteries need a charge every 30 days (from memory)" in body
    assert "Default 0.020 SG. Source: common practice (field notes): a post-charge spread over about 0.020" in body


def test_an_override_is_shown_beside_the_value_it_replaced(crew_client, weak, traction_profile, battery, crew):
    from fleetcare.care.models import Policy

    Policy.objects.create(profile=traction_profile, weak_cell_below_mean_sg=Decimal("0.020"))
    detect(battery, timezone.now())
    finding = Finding.objects.get(battery=battery, kind="weak_cell")
    body = crew_client.get(reverse("care:finding", args=[finding.pk])).content.decode()
    assert "0.020 SG" in body and "policy for profile 48 V 24-cell 775 Ah" in body and "default 0.030" in body

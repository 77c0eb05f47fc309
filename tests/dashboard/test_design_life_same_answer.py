"""Past design life in years: the overview's count, its battery list and the ageing finding give one answer
(fleetcare.fleet.life), on the demo and on the day a battery's design life runs out."""
import datetime as dt

import pytest
from django.core.management import call_command
from django.utils import timezone

from fleetcare.care import detection
from fleetcare.care.models import Finding
from fleetcare.fleet import life
from fleetcare.fleet.models import Battery

LABEL = "Older than design life (years)"


def overview_past_life(client):
    context = client.get("/").context
    cells = [r for s in context["sections"] for r in s["rows"] if r["label"] == LABEL][0]["cells"]
    page = client.get(cells[-1]["url"]).context["page"]
    assert page.paginator.num_pages == 1 and page.paginator.count == cells[-1]["count"]
    return {b.pk for b in page.object_list}


def findings_past_life():
    """Batteries whose ageing finding is (at least) for years in service: "in service 5.6 years (design life 5 years)"."""
    return {f.battery_id for f in Finding.objects.active().filter(kind="ageing") if "years (design life" in f.summary}


@pytest.fixture
def admin_client_all(client, admin_user):
    client.force_login(admin_user)
    return client


def test_the_overview_and_the_ageing_finding_agree_on_the_demo(admin_client_all, db):
    call_command("demo", "--no-serve", stdout=None)
    now = timezone.now()
    detection.detect_fleet(now=now)
    today = timezone.localdate(now)
    by_rule = {b.pk for b in Battery.objects.exclude(status=Battery.Status.RETIRED).select_related("profile")
               if life.is_past_design_life(b.in_service_date, b.profile.design_life_years, today)}
    assert by_rule, "the demo has batteries past their design life"
    assert overview_past_life(admin_client_all) == by_rule
    assert findings_past_life() == by_rule


def test_on_the_day_design_life_runs_out_every_screen_says_so(admin_client_all, battery):
    now = timezone.now()
    today = timezone.localdate(now)
    years = battery.profile.design_life_years
    battery.in_service_date = today - dt.timedelta(days=life.design_life_days(years))
    battery.save(update_fields=["in_service_date"])
    detection.detect_fleet(now=now)
    assert overview_past_life(admin_client_all) == {battery.pk} == findings_past_life()

    battery.in_service_date += dt.timedelta(days=1)  # one day short
    battery.save(update_fields=["in_service_date"])
    detection.detect_fleet(now=now)
    assert overview_past_life(admin_client_all) == set()
    assert battery.pk not in findings_past_life()

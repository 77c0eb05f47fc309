"""The crew's day first: signing in lands the crew on today's work for the site this tablet last opened."""
import datetime as dt

from django.urls import reverse
from django.utils import timezone

from fleetcare.planner.models import EqualizingCharge
from fleetcare.planner.views import LAST_SITE_COOKIE


def test_crew_land_on_todays_work_and_supervisors_on_the_overview(crew_client, client, supervisor):
    assert crew_client.get("/start/")["Location"] == reverse("planner:home")
    client.force_login(supervisor)
    assert client.get("/start/")["Location"] == reverse("dashboard:home")


def test_the_front_page_takes_the_crew_where_signing_in_does_and_supervisors_to_the_overview(
        crew_client, client, supervisor, manager, site):
    crew_client.cookies[LAST_SITE_COOKIE] = site.code
    assert crew_client.get("/")["Location"] == crew_client.get("/start/")["Location"] == reverse("planner:home")
    landed = crew_client.get("/", follow=True)
    assert [url for url, _ in landed.redirect_chain] == [reverse("planner:home"), reverse("planner:today", args=[site.code])]
    html = landed.content.decode()
    assert "plotly" not in html.lower() and ">Overview</a>" not in html  # no chart library; the menu offers no overview
    for boss in (supervisor, manager):
        client.force_login(boss)
        overview = client.get("/")
        assert overview.status_code == 200 and "Fleet overview" in overview.content.decode()
        assert ">Overview</a>" in overview.content.decode()


def test_the_site_last_opened_is_remembered(crew_client, site, care_site):
    assert crew_client.get(reverse("planner:home")).status_code == 200  # two sites, none opened yet: choose
    response = crew_client.get(reverse("planner:today", args=[care_site.code]))
    assert response.cookies[LAST_SITE_COOKIE].value == care_site.code
    assert crew_client.get(reverse("planner:home"))["Location"] == reverse("planner:today", args=[care_site.code])
    assert crew_client.get(reverse("planner:home") + "?choose=1").status_code == 200


def test_todays_work_loads_no_chart_library(crew_client, site):
    html = crew_client.get(reverse("planner:today", args=[site.code])).content.decode()
    assert "plotly" not in html.lower()


def test_reading_all_cells_after_equalizing_opens_with_just_equalized(crew_client, battery, site, crew):
    ended = timezone.now() - dt.timedelta(hours=1)
    EqualizingCharge.objects.create(battery=battery, started_at=ended - dt.timedelta(hours=3), ended_at=ended,
                                    by=crew)
    html = crew_client.get(reverse("planner:today", args=[site.code])).content.decode()
    assert f"/readings/battery/{battery.pk}/inspect/?scope=all&amp;via=today&amp;situation=equalized" in html


def test_sealed_batteries_have_no_water_screen_and_no_water_search(crew_client, sealed_battery):
    response = crew_client.get(reverse("readings:top_up", args=[sealed_battery.pk]))
    assert response["Location"] == reverse("readings:inspect", args=[sealed_battery.pk])
    found = crew_client.get(reverse("readings:find") + "?then=water&q=TR-P01")
    assert found.status_code == 200 and found.context["matches"] == []
    page = crew_client.get(reverse("readings:inspect", args=[sealed_battery.pk])).content.decode().lower()
    before, _, rest = page.split("<main", 1)[1].partition("fc-cautions")  # the cautions are one shared template
    screen = before + rest.split("</aside>", 1)[1]
    for word in ("hydrometer", "electrolyte", "water"):
        assert word not in screen


def test_a_screen_opened_by_search_shows_the_battery_large(crew_client, battery):
    response = crew_client.get(reverse("readings:find") + "?q=FL-01")
    assert response["Location"].endswith("?via=search")
    html = crew_client.get(response["Location"]).content.decode()
    assert 'id="chosen-battery"' in html and "forklift FL-01" in html and "24 cells · 48 V · 775 Ah" in html
    assert 'id="chosen-battery"' not in crew_client.get(reverse("readings:inspect", args=[battery.pk])).content.decode()


def test_a_site_of_sealed_blocks_offers_no_water_to_log(crew_client, battery, sealed_battery, care_site, site):
    sealed_page = crew_client.get(f"/planner/{care_site.code}/today/").content.decode()
    button = 'btn-lg" href="/readings/find/?then=water"'  # the page's own button (the menu keeps its link)
    assert "Log a reading" in sealed_page and button not in sealed_page
    flooded_page = crew_client.get(f"/planner/{site.code}/today/").content.decode()
    assert button in flooded_page

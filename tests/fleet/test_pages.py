import pytest
from django.core.management import call_command
from django.urls import reverse

from fleetcare.fleet.models import Battery, Site
from fleetcare.readings.models import Inspection


@pytest.mark.parametrize("name", ["dashboard:home", "fleet:batteries", "readings:find", "readings:import"])
def test_pages_send_anonymous_users_to_sign_in(client, db, name):
    response = client.get(reverse(name))
    assert response.status_code == 302 and response["Location"].startswith("/accounts/login/")


def test_the_sign_in_page_renders(client, db):
    assert client.get("/accounts/login/").status_code == 200


def test_the_battery_list_shows_only_my_sites(crew_client, battery, other_battery):
    html = crew_client.get(reverse("fleet:batteries")).content.decode()
    assert battery.serial in html and other_battery.serial not in html


def test_find_by_asset_number_goes_straight_to_entry(crew_client, battery):
    response = crew_client.get(reverse("readings:find"), {"q": "FL-01"})
    assert response.status_code == 302
    assert response["Location"] == reverse("readings:inspect", args=[battery.pk]) + "?via=search"


def test_another_sites_battery_record_answers_404(crew_client, other_battery):
    assert crew_client.get(reverse("fleet:battery", args=[other_battery.pk])).status_code == 404


@pytest.fixture
def demo_world(db):
    call_command("demo", "--no-serve")
    return Battery.objects.count()


def test_the_demo_loads_once_and_every_page_renders(client, demo_world, django_assert_max_num_queries):
    call_command("demo", "--no-serve")  # a second run adds nothing
    assert Battery.objects.count() == demo_world
    assert Site.objects.count() == 3
    assert Inspection.objects.filter(taken_at__lt=Inspection.objects.latest("taken_at").taken_at.replace(year=2025)).exists() or \
        Inspection.objects.count() > 1000
    client.login(username="demo-supervisor", password="try-fleetcare-2026")
    assert client.get(reverse("dashboard:home")).status_code == 200
    client.login(username="demo-crew", password="try-fleetcare-2026")
    assert client.get(reverse("dashboard:home"), follow=True).status_code == 200  # the crew's today's work
    weak = Battery.objects.get(serial="HRW-B07")
    page = client.get(reverse("fleet:battery", args=[weak.pk]))
    assert page.status_code == 200
    assert b"chart-heatmap" in page.content and b"chart-soc" in page.content
    chair = Battery.objects.get(serial="ELM-P05")
    assert client.get(reverse("fleet:battery", args=[chair.pk])).status_code == 200
    assert client.get(reverse("readings:inspect", args=[weak.pk])).status_code == 200


def test_the_demo_tells_its_stories(demo_world):
    weak = Inspection.objects.current().filter(battery__serial="HRW-B07", scope="all").latest("taken_at")
    assert weak.lowest_position == 9 and weak.sg_spread > 0.040
    healthy = Inspection.objects.current().filter(battery__serial="HRW-B02", scope="all").latest("taken_at")
    assert healthy.sg_spread < 0.025

"""Users see their own sites only; administrators see every site. Another site's objects answer 404."""
import pytest
from django.contrib.auth import get_user_model
from django.core.management import CommandError, call_command
from django.urls import reverse

from fleetcare.fleet.access import visible_batteries, visible_sites
from fleetcare.readings.access import visible_inspections, visible_top_ups
from fleetcare.readings.models import Inspection

from .conftest import store_inspection, store_top_up


def test_a_manager_sees_only_the_sites_they_belong_to(manager, site, care_site, other_site):
    assert set(visible_sites(manager)) == {site, care_site}


def test_an_administrator_sees_every_site(administrator, site, care_site, other_site):
    assert set(visible_sites(administrator)) == {site, care_site, other_site}


def test_a_superuser_sees_every_site(db, site, other_site):
    root = get_user_model().objects.create_superuser("root", password="not-a-real-password-1")
    assert set(visible_sites(root)) == {site, other_site}


def test_a_signed_in_user_without_a_role_sees_nothing_of_a_site_they_belong_to(django_user_model, site, battery):
    nobody = django_user_model.objects.create_user("norole", password="not-a-real-password-1")
    site.members.add(nobody)
    assert list(visible_sites(nobody)) == [site]  # membership alone...
    from django.test import Client

    c = Client()
    c.force_login(nobody)
    assert c.get(reverse("fleet:battery", args=[battery.pk])).status_code == 403  # ...is not a role


def test_readings_and_top_ups_follow_their_battery_s_site(crew, battery, other_battery):
    mine, theirs = store_inspection(battery, crew), store_inspection(other_battery, crew)
    my_water, their_water = store_top_up(battery, crew), store_top_up(other_battery, crew)
    assert list(visible_batteries(crew)) == [battery]
    assert list(visible_inspections(crew)) == [mine]
    assert list(visible_top_ups(crew)) == [my_water]
    assert theirs.pk and their_water.pk


def test_the_battery_list_shows_only_my_sites_even_when_asked_for_another(crew_client, battery, other_battery):
    response = crew_client.get(reverse("fleet:batteries"), {"site": "other"})
    assert response.status_code == 200
    assert "OT-001" not in response.content.decode()
    assert "OT-001" not in crew_client.get(reverse("fleet:batteries")).content.decode()


@pytest.mark.parametrize("url_name", ["fleet:battery", "readings:inspect", "readings:top_up", "readings:export_csv"])
def test_another_sites_battery_answers_404_to_a_manager(client, manager, other_battery, url_name):
    client.force_login(manager)
    assert client.get(reverse(url_name, args=[other_battery.pk])).status_code == 404


def test_an_administrator_opens_another_sites_battery(client, administrator, other_battery):
    client.force_login(administrator)
    assert client.get(reverse("fleet:battery", args=[other_battery.pk])).status_code == 200


def test_the_import_command_only_reaches_the_readers_sites(tmp_path, crew, battery, other_battery):
    csv_file = tmp_path / "other.csv"
    csv_file.write_text(
        "serial,taken_at,situation,cell,sg,temp,volts,level\n"
        "OT-001,2026-11-30T06:00,charged,1,1.280,25,,ok\n"
    )
    with pytest.raises(CommandError, match="Nothing imported"):
        call_command("import_readings", str(csv_file), user="crew1")
    assert not Inspection.objects.exists()

"""Each reading records how its battery was picked (scanned label, search, today's work, API, import)."""
import datetime as dt
import uuid

import pytest
from django.db import connection
from django.db.migrations.executor import MigrationExecutor
from django.urls import reverse
from django.utils import timezone

from fleetcare.fleet.models import Battery
from fleetcare.readings import selectors, services
from fleetcare.readings.models import Inspection
from tests.readings.test_csv_import import HEADER, inspection_rows, run
from tests.readings.test_inspection_entry import post_data


def inspect_url(battery, query=""):
    return reverse("readings:inspect", args=[battery.pk]) + query


def test_the_entry_screen_carries_how_the_battery_was_picked_from_its_address(crew_client, battery):
    html = crew_client.get(inspect_url(battery, "?via=scan")).content.decode()
    assert '<input type="hidden" name="chosen_via" value="scan">' in html
    html = crew_client.get(inspect_url(battery, "?via=made-up")).content.decode()
    assert '<input type="hidden" name="chosen_via" value="unknown">' in html


def test_a_reading_saved_after_a_scan_is_stored_and_shown_as_scanned(crew_client, battery):
    response = crew_client.post(inspect_url(battery, "?via=scan"), post_data(battery, chosen_via="scan"))
    inspection = Inspection.objects.get()
    assert inspection.chosen_via == "scan"
    page = crew_client.get(response["Location"]).content.decode()
    assert "Battery chosen: label scanned" in page


@pytest.mark.parametrize("claimed", ["api", "import", "nonsense", ""])
def test_the_tablet_form_cannot_claim_another_programs_way_in(crew_client, battery, claimed):
    crew_client.post(inspect_url(battery), post_data(battery, chosen_via=claimed))
    assert Inspection.objects.get().chosen_via == "unknown"


def test_a_search_with_one_match_opens_the_entry_screen_marked_as_searched(crew_client, battery):
    response = crew_client.get(reverse("readings:find"), {"q": "TW-001"})
    assert response["Location"] == inspect_url(battery, "?via=search")


def test_the_links_to_the_entry_screen_say_where_they_come_from(crew_client, battery):
    assert inspect_url(battery, "?via=page") in crew_client.get(reverse("fleet:battery", args=[battery.pk])).content.decode()
    assert inspect_url(battery, "?via=page") in crew_client.get(reverse("fleet:batteries")).content.decode()


def test_csv_imports_are_recorded_as_imports(battery, crew):
    assert run(HEADER + inspection_rows(), crew).imported
    assert Inspection.objects.get().chosen_via == "import"


def test_a_correction_keeps_how_the_battery_was_picked(battery, crew, supervisor):
    old, _ = services.record_inspection(
        battery=battery, user=crew, taken_at=timezone.now(), situation="charged", chosen_via="scan",
        cells=[services.CellEntry(position=n, sg=1.280) for n in range(1, 25)],
    )
    new, _ = services.correct_inspection(
        old, user=supervisor, reason="typo in cell 3", taken_at=old.taken_at, situation="charged",
        cells=[services.CellEntry(position=n, sg=1.281) for n in range(1, 25)],
    )
    assert new.chosen_via == "scan"


def _reading(battery, user, via, days_ago=1):
    inspection, _ = services.record_inspection(
        battery=battery, user=user, taken_at=timezone.now() - dt.timedelta(days=days_ago), situation="charged",
        chosen_via=via, cells=[services.CellEntry(position=1, sg=1.280)], scope="pilot",
    )
    return inspection


def test_the_overview_shows_each_sites_share_of_readings_by_scan(client, supervisor, battery, sealed_battery, site, care_site):
    for via in ("scan", "scan", "search"):
        _reading(battery, supervisor, via)
    _reading(battery, supervisor, "scan", days_ago=45)  # before the overview's window
    removed = _reading(battery, supervisor, "scan")
    services.remove_inspection(removed, user=supervisor, reason="wrong battery")
    client.force_login(supervisor)
    response = client.get("/")
    rows = {row["site"].code: row for row in response.context["chosen_via"]}
    assert (rows["tw"]["total"], rows["tw"]["by_scan"], rows["tw"]["scan_percent"]) == (3, 2, 67)
    assert (rows["tr"]["total"], rows["tr"]["scan_percent"]) == (0, None)
    html = response.content.decode()
    assert '<tr data-site="tw">' in html and "67 %" in html
    # The overview counts the same readings the reading pages show as scanned.
    window = timezone.now() - dt.timedelta(days=selectors.CHOSEN_VIA_DAYS)
    shown_scanned = [i for i in Inspection.objects.current().filter(battery__site=site, taken_at__gte=window)
                     if "label scanned" in client.get(reverse("readings:inspection", args=[i.pk])).content.decode()]
    assert len(shown_scanned) == rows["tw"]["by_scan"]


@pytest.mark.django_db(transaction=True)
def test_readings_stored_before_the_field_existed_count_as_not_recorded(site, traction_profile, crew):
    executor = MigrationExecutor(connection)
    executor.migrate([("readings", "0005_csv_import")])
    old_apps = executor.loader.project_state([("readings", "0005_csv_import")]).apps
    OldInspection = old_apps.get_model("readings", "Inspection")
    battery = Battery.objects.create(serial="TW-OLD", profile=traction_profile, site=site, in_service_date=dt.date(2024, 1, 1))
    OldInspection.objects.create(battery_id=battery.pk, taken_by_id=crew.pk, taken_at=timezone.now(),
                                 situation="charged", scope="all", client_uuid=uuid.uuid4(), recorded_at=timezone.now())
    executor = MigrationExecutor(connection)
    executor.loader.build_graph()
    executor.migrate(executor.loader.graph.leaf_nodes())
    assert Inspection.objects.get(battery=battery).chosen_via == "unknown"
    assert Inspection.objects.get(battery=battery).get_chosen_via_display() == "Not recorded"

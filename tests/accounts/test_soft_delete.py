"""Removing a reading or a top-up keeps the row, records who and why, and stops it counting."""
from django.urls import reverse

from fleetcare.readings.models import ReadingChange
from fleetcare.readings import services
from fleetcare.readings.models import Inspection, WaterTopUp

from .conftest import store_inspection, store_top_up


def test_removing_a_reading_keeps_the_row_and_stops_it_counting(supervisor_client, battery, crew, supervisor):
    inspection = store_inspection(battery, crew)
    response = supervisor_client.post(reverse("readings:remove", args=[inspection.pk]),
                                      {"reason": "Entered against the wrong battery"})
    assert response.status_code == 302
    assert response["Location"] == reverse("fleet:battery", args=[battery.pk])
    inspection.refresh_from_db()
    assert inspection.deleted_at is not None
    assert inspection.deleted_by == supervisor
    assert inspection.cells.count() == 24
    assert not Inspection.objects.current().exists()
    change = ReadingChange.objects.get()
    assert (change.action, change.inspection, change.reason) == ("removed", inspection, "Entered against the wrong battery")


def test_a_removed_reading_is_gone_from_the_battery_record_but_listed_in_its_history(supervisor_client, battery, crew):
    inspection = store_inspection(battery, crew)
    supervisor_client.post(reverse("readings:remove", args=[inspection.pk]), {"reason": "Duplicate of the 06:00 reading"})
    response = supervisor_client.get(reverse("fleet:battery", args=[battery.pk]))
    assert response.context["inspections"] == []
    html = response.content.decode()
    assert "Duplicate of the 06:00 reading" in html
    page = supervisor_client.get(reverse("readings:inspection", args=[inspection.pk])).content.decode()
    assert "This reading was removed" in page
    assert "Duplicate of the 06:00 reading" in page


def test_removal_needs_a_reason(supervisor_client, battery, crew):
    inspection = store_inspection(battery, crew)
    response = supervisor_client.post(reverse("readings:remove", args=[inspection.pk]), {"reason": " "})
    assert response.status_code == 200
    assert "Nothing was removed" in response.content.decode()
    assert Inspection.objects.current().get() == inspection


def test_a_removed_reading_cannot_be_corrected_or_removed_again(supervisor_client, battery, crew, supervisor):
    inspection = store_inspection(battery, crew)
    services.remove_inspection(inspection, user=supervisor, reason="wrong battery")
    response = supervisor_client.get(reverse("readings:correct", args=[inspection.pk]), follow=True)
    assert "This reading was removed; a removed reading cannot be corrected or removed again." in response.content.decode()
    again = supervisor_client.post(reverse("readings:remove", args=[inspection.pk]), {"reason": "wrong battery"}, follow=True)
    assert "cannot be corrected or removed again" in again.content.decode()
    assert ReadingChange.objects.count() == 1


def test_removing_a_top_up_keeps_the_row_and_stops_it_counting(supervisor_client, battery, crew, supervisor):
    top_up = store_top_up(battery, crew)
    response = supervisor_client.post(reverse("readings:remove_top_up", args=[top_up.pk]), {"reason": "Logged twice by mistake"})
    assert response.status_code == 302
    top_up.refresh_from_db()
    assert top_up.deleted_at is not None
    assert not WaterTopUp.objects.current().exists()
    change = ReadingChange.objects.get()
    assert (change.top_up, change.changed_by, change.reason) == (top_up, supervisor, "Logged twice by mistake")
    record = supervisor_client.get(reverse("fleet:battery", args=[battery.pk]))
    assert list(record.context["top_ups"]) == []
    assert "Logged twice by mistake" in record.content.decode()


def test_crew_may_not_remove_readings_or_top_ups(crew_client, battery, crew):
    inspection = store_inspection(battery, crew)
    top_up = store_top_up(battery, crew)
    assert crew_client.post(reverse("readings:remove", args=[inspection.pk]), {"reason": "mine"}).status_code == 403
    assert crew_client.post(reverse("readings:remove_top_up", args=[top_up.pk]), {"reason": "mine"}).status_code == 403
    assert Inspection.objects.current().count() == 1
    assert WaterTopUp.objects.current().count() == 1


def test_the_battery_record_offers_top_up_removal_to_supervisors_only(supervisor_client, client, crew, battery):
    top_up = store_top_up(battery, crew)
    link = reverse("readings:remove_top_up", args=[top_up.pk])
    assert link in supervisor_client.get(reverse("fleet:battery", args=[battery.pk])).content.decode()
    client.force_login(crew)
    assert link not in client.get(reverse("fleet:battery", args=[battery.pk])).content.decode()

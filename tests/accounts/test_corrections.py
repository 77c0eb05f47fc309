"""A correction stores a new revision (who, when, why) and never edits a stored reading in place."""
import uuid
from decimal import Decimal

import pytest
from django.db import IntegrityError
from django.urls import reverse

from fleetcare.readings.models import ReadingChange
from fleetcare.readings import services
from fleetcare.readings.models import CellReading, Inspection
from fleetcare.readings.services import CellEntry

from .conftest import TAKEN_AT, store_inspection


def correction_post(points, temp="30", reason="Cell 9 typed as 1.272, hydrometer showed 1.232", **extra):
    data = {"situation": "charged", "scope": "all", "taken_at": "2026-11-30T06:15", "temp": temp,
            "client_uuid": str(uuid.uuid4()), "notes": "", "reason": reason}
    for n, value in enumerate(points, start=1):
        data[f"sg_{n}"] = value
    data.update(extra)
    return data


CORRECTED = ["1.272"] * 24
CORRECTED[8] = "1.232"


def test_it_prefills_the_correction_page_with_the_stored_values(supervisor_client, battery, crew):
    inspection = store_inspection(battery, crew, sg="1.265", temp_c=Decimal("30.0"), low_cells=(4,))
    response = supervisor_client.get(reverse("readings:correct", args=[inspection.pk]))
    form = response.context["form"]
    assert response.status_code == 200
    assert form["sg_1"].value() == Decimal("1.265")
    assert form["low_4"].value() is True
    assert form["low_5"].value() is False
    assert form["temp"].value() == Decimal("30.0")
    assert form["situation"].value() == "charged"
    assert 'name="reason"' in response.content.decode()


def test_a_correction_stores_a_new_revision_and_keeps_the_old_one(supervisor_client, battery, crew, supervisor):
    old = store_inspection(battery, crew, sg="1.272")
    response = supervisor_client.post(reverse("readings:correct", args=[old.pk]), correction_post(CORRECTED))
    new = Inspection.objects.current().get()
    assert response.status_code == 302
    assert response["Location"] == reverse("readings:inspection", args=[new.pk])
    old.refresh_from_db()
    assert old.is_current is False
    assert old.sg_min == Decimal("1.276")  # untouched: 1.272 at 30 °C corrected to 25 °C
    assert new.supersedes == old
    assert new.revision_reason == "Cell 9 typed as 1.272, hydrometer showed 1.232"
    assert new.taken_by == crew  # the reading is still the crew member's
    assert new.lowest_position == 9
    assert new.sg_min == Decimal("1.236")
    assert CellReading.objects.filter(inspection=old).count() == 24
    change = ReadingChange.objects.get()
    assert (change.action, change.inspection, change.new_revision, change.changed_by) == ("corrected", old, new, supervisor)


def test_a_correction_needs_a_reason_and_stores_nothing_without_one(supervisor_client, battery, crew):
    old = store_inspection(battery, crew)
    response = supervisor_client.post(reverse("readings:correct", args=[old.pk]), correction_post(CORRECTED, reason=""))
    assert response.status_code == 200
    assert response.context["reason_form"].errors["reason"] == ["This field is required."]
    assert Inspection.objects.count() == 1
    assert Inspection.objects.current().get() == old


def test_a_bad_value_in_a_correction_stores_nothing(supervisor_client, battery, crew):
    old = store_inspection(battery, crew)
    points = list(CORRECTED)
    points[2] = "1.400"
    response = supervisor_client.post(reverse("readings:correct", args=[old.pk]), correction_post(points))
    assert response.status_code == 200
    assert response.context["form"].errors["sg_3"] == ["1.400 is outside 1.000–1.350. Check the hydrometer reading."]
    assert list(Inspection.objects.current()) == [old]
    assert not ReadingChange.objects.exists()


def test_correcting_a_superseded_version_is_refused_with_a_message(supervisor_client, battery, crew):
    old = store_inspection(battery, crew)
    supervisor_client.post(reverse("readings:correct", args=[old.pk]), correction_post(CORRECTED))
    response = supervisor_client.post(reverse("readings:correct", args=[old.pk]), correction_post(CORRECTED), follow=True)
    assert "This version was already corrected. Open the current version and correct that one instead." in response.content.decode()
    assert Inspection.objects.count() == 2
    assert Inspection.objects.current().count() == 1


def test_the_service_refuses_a_stale_revision_even_if_the_page_was_open_before(battery, crew, supervisor):
    old = store_inspection(battery, crew)
    stale = Inspection.objects.get(pk=old.pk)  # a second supervisor opened the page before the first saved
    cells = [CellEntry(position=p, sg=Decimal("1.250")) for p in range(1, 25)]
    services.correct_inspection(old, user=supervisor, reason="first correction", cells=cells, temp_c=Decimal("25"),
                                taken_at=old.taken_at, situation="charged")
    with pytest.raises(services.RevisionError, match="already corrected"):
        services.correct_inspection(stale, user=supervisor, reason="second correction", cells=cells,
                                    temp_c=Decimal("25"), taken_at=old.taken_at, situation="charged")
    assert Inspection.objects.count() == 2
    assert ReadingChange.objects.count() == 1


def test_a_correction_that_fails_part_way_leaves_the_old_revision_current(battery, crew, supervisor):
    old = store_inspection(battery, crew)
    twice = [CellEntry(position=1, sg=Decimal("1.250")), CellEntry(position=1, sg=Decimal("1.260"))]
    with pytest.raises(IntegrityError):
        services.correct_inspection(old, user=supervisor, reason="cell listed twice", cells=twice,
                                    temp_c=Decimal("25"), taken_at=old.taken_at, situation="charged")
    old.refresh_from_db()
    assert old.is_current is True
    assert list(Inspection.objects.current()) == [old]
    assert not ReadingChange.objects.exists()


def test_a_resent_correction_is_stored_once(supervisor_client, battery, crew):
    old = store_inspection(battery, crew)
    data = correction_post(CORRECTED)
    supervisor_client.post(reverse("readings:correct", args=[old.pk]), data)
    new = Inspection.objects.current().get()
    response = supervisor_client.post(reverse("readings:correct", args=[new.pk]), data, follow=True)
    assert Inspection.objects.count() == 2
    assert ReadingChange.objects.count() == 1
    assert "already saved" in response.content.decode()


def test_per_cell_temperatures_carry_over_when_the_temperature_is_unchanged(battery, crew, supervisor):
    cells = [CellEntry(position=p, sg=Decimal("1.260"), temp_c=Decimal("35.0") if p == 1 else None) for p in range(1, 25)]
    old, _ = services.record_inspection(battery=battery, user=crew, taken_at=TAKEN_AT,
                                        situation="charged", cells=cells, temp_c=Decimal("25.0"))
    fixed = [CellEntry(position=p, sg=Decimal("1.270")) for p in range(1, 25)]
    new, _ = services.correct_inspection(old, user=supervisor, reason="all cells read 10 points low", cells=fixed,
                                         temp_c=Decimal("25.0"), taken_at=old.taken_at, situation="charged")
    first = new.cells.get(position=1)
    # 1.270 at 35 °C corrected to 25 °C at 0.0007/°C: 1.270 + 0.007 = 1.277
    assert (first.temp_c, first.sg_corrected) == (Decimal("35.0"), Decimal("1.277"))
    assert new.cells.get(position=2).sg_corrected == Decimal("1.270")


def test_the_inspection_page_shows_who_corrected_it_when_and_why(supervisor_client, battery, crew):
    old = store_inspection(battery, crew)
    supervisor_client.post(reverse("readings:correct", args=[old.pk]), correction_post(CORRECTED))
    new = Inspection.objects.current().get()
    html = supervisor_client.get(reverse("readings:inspection", args=[new.pk])).content.decode()
    assert "History of this reading" in html
    assert "super1 (correction)" in html
    assert "Cell 9 typed as 1.272, hydrometer showed 1.232" in html
    old_html = supervisor_client.get(reverse("readings:inspection", args=[old.pk])).content.decode()
    assert "see the current version" in old_html
    assert "Correct this reading" not in old_html


def test_the_battery_record_lists_corrections(supervisor_client, battery, crew):
    old = store_inspection(battery, crew)
    supervisor_client.post(reverse("readings:correct", args=[old.pk]), correction_post(CORRECTED))
    html = supervisor_client.get(reverse("fleet:battery", args=[battery.pk])).content.decode()
    assert "Corrections and removals" in html
    assert "Cell 9 typed as 1.272, hydrometer showed 1.232" in html


def test_crew_may_not_correct_a_reading(crew_client, battery, crew):
    old = store_inspection(battery, crew)
    response = crew_client.post(reverse("readings:correct", args=[old.pk]), correction_post(CORRECTED))
    assert response.status_code == 403
    assert Inspection.objects.count() == 1
    assert "Correct this reading" not in crew_client.get(reverse("readings:inspection", args=[old.pk])).content.decode()


def test_a_supervisor_cannot_correct_another_sites_reading(supervisor_client, other_battery, crew):
    other = store_inspection(other_battery, crew)
    response = supervisor_client.post(reverse("readings:correct", args=[other.pk]), correction_post(CORRECTED))
    assert response.status_code == 404
    assert Inspection.objects.count() == 1


def test_a_fahrenheit_site_sees_its_temperature_in_fahrenheit(supervisor_client, battery, crew, site):
    site.temp_unit = "F"
    site.save()
    inspection = store_inspection(battery, crew, temp_c=Decimal("30.0"))
    form = supervisor_client.get(reverse("readings:correct", args=[inspection.pk])).context["form"]
    assert form["temp"].value() == Decimal("86.0")  # 30 °C = 86 °F


def test_a_sealed_pair_is_corrected_block_by_block(supervisor_client, sealed_battery, crew):
    cells = [CellEntry(position=1, volts=Decimal("12.71")), CellEntry(position=2, volts=Decimal("12.17"))]
    old, _ = services.record_inspection(battery=sealed_battery, user=crew, taken_at=TAKEN_AT, situation="rested",
                                        cells=cells)
    url = reverse("readings:correct", args=[old.pk])
    form = supervisor_client.get(url).context["form"]
    assert (form["volts_1"].value(), form["volts_2"].value()) == (Decimal("12.710"), Decimal("12.170"))
    response = supervisor_client.post(url, {
        "situation": "rested", "scope": "all", "taken_at": "2026-11-30T06:15", "temp": "", "notes": "",
        "client_uuid": str(uuid.uuid4()), "volts_1": "12.71", "volts_2": "12.67",
        "reason": "Block 2 read with a loose lead; re-read 12.67 V",
    })
    assert response.status_code == 302
    new = Inspection.objects.current().get(battery=sealed_battery)
    assert new.volts_total == Decimal("25.38")
    assert list(new.cells.values_list("volts", flat=True)) == [Decimal("12.710"), Decimal("12.670")]


def test_a_correction_is_never_kept_for_the_offline_outbox(supervisor_client, battery, crew):
    """Offline, the outbox would send it as a brand-new reading: the correction page opts out of it."""
    old = store_inspection(battery, crew)
    assert "data-offline-api" in supervisor_client.get(reverse("readings:inspect", args=[battery.pk])).content.decode()
    assert "data-offline-api" not in supervisor_client.get(reverse("readings:correct", args=[old.pk])).content.decode()


def test_a_retired_batterys_history_can_still_be_corrected(supervisor_client, battery, crew):
    inspection = store_inspection(battery, crew, sg="1.265", temp_c=Decimal("30.0"))
    battery.status = "retired"
    battery.save()
    response = supervisor_client.post(reverse("readings:correct", args=[inspection.pk]), correction_post(CORRECTED))
    assert response.status_code == 302
    assert Inspection.objects.current().get(battery=battery).supersedes_id == inspection.pk

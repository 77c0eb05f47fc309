"""POST /api/batteries/{id}/inspections: the tablet form's checks, stored once per client UUID."""
import datetime as dt
import uuid
from decimal import Decimal

from fleetcare.fleet.models import Battery
from fleetcare.readings.forms import InspectionForm
from fleetcare.readings import validation
from fleetcare.readings.models import Inspection
from tests.api.conftest import TRAY_SG, post_json, reading_body


def url(battery):
    return f"/api/batteries/{battery.pk}/inspections"


def test_it_stores_an_all_cell_reading_with_its_figures(token_client, battery):
    response = post_json(token_client, url(battery), reading_body())
    assert response.status_code == 201
    body = response.json()
    stored = Inspection.objects.get()
    assert body["id"] == stored.pk and body["serial"] == "TW-001" and body["taken_by"] == "crew1"
    # 30 °C is 5 °C over the profile's 25 °C reference: +0.0035 each (0.0007 per °C, field notes).
    assert body["cells"][8] == {"position": 9, "sg": 1.255, "sg_corrected": 1.259, "volts": None, "level": "low"}
    assert body["lowest_position"] == 9
    assert body["sg_spread"] == 0.033  # 1.288 - 1.255 observed; the correction shifts every cell alike
    assert stored.sg_spread == Decimal("0.033")
    assert body["soc_basis"] == "sg"


def test_it_reads_a_time_without_offset_in_the_batterys_site_time(token_client, battery):
    response = post_json(token_client, url(battery), reading_body(taken_at="2026-07-01T08:00"))
    assert response.status_code == 201
    # The site is Europe/London: 08:00 in July is 07:00 UTC.
    assert Inspection.objects.get().taken_at == dt.datetime(2026, 7, 1, 7, 0, tzinfo=dt.timezone.utc)


def test_the_same_body_twice_stores_one_inspection_and_gets_the_same_answer(token_client, battery):
    body = reading_body()
    first = post_json(token_client, url(battery), body)
    second = post_json(token_client, url(battery), body)
    assert (first.status_code, second.status_code) == (201, 201)
    assert first.content == second.content
    assert Inspection.objects.count() == 1


def test_a_resend_after_the_battery_was_retired_still_gets_the_first_answer(token_client, battery):
    body = reading_body()
    first = post_json(token_client, url(battery), body)
    Battery.objects.filter(pk=battery.pk).update(status=Battery.Status.RETIRED)
    second = post_json(token_client, url(battery), body)
    assert second.status_code == 201 and second.content == first.content


def test_a_reading_saved_by_the_tablet_form_is_not_stored_again_through_the_api(crew_client, battery):
    body = reading_body()
    form_data = {"client_uuid": body["client_uuid"], "situation": "charged", "scope": "all",
                 "taken_at": "2026-11-30T07:15", "temp": "30"}
    form_data.update({f"sg_{i}": sg for i, sg in enumerate(TRAY_SG, start=1)})
    assert crew_client.post(f"/readings/battery/{battery.pk}/inspect/", form_data).status_code == 302
    response = post_json(crew_client, url(battery), body)
    assert response.status_code == 201
    assert response.json()["id"] == Inspection.objects.get().pk


def test_it_returns_the_forms_own_messages_per_field(token_client, battery):
    cells = [{"position": i, "sg": sg} for i, sg in enumerate(TRAY_SG, start=1)]
    cells[2]["sg"] = "12"  # ambiguous
    cells[5]["sg"] = "1.500"  # out of range
    cells[7]["sg"] = None  # missing
    response = post_json(token_client, url(battery), reading_body(cells=cells, temp=None))
    assert response.status_code == 422
    errors = response.json()["errors"]

    form_data = {"client_uuid": str(uuid.uuid4()), "situation": "charged", "scope": "all",
                 "taken_at": "2026-11-30T07:15", "temp": ""}
    form_data.update({f"sg_{c['position']}": c["sg"] or "" for c in cells})
    form = InspectionForm(form_data, battery=battery)
    assert not form.is_valid()
    assert errors == {name: list(messages) for name, messages in form.errors.items()}
    assert set(errors) == {"sg_3", "sg_6", "sg_8", "temp"}
    assert errors["sg_8"] == ["Cell 8 is empty: an all-cell reading needs all 24 cells."]
    assert Inspection.objects.count() == 0


def test_it_refuses_cells_the_battery_does_not_have(token_client, battery):
    body = reading_body()
    body["cells"].append({"position": 25, "sg": "280"})
    response = post_json(token_client, url(battery), body)
    assert response.status_code == 422
    assert response.json()["errors"] == {"cells": ["There is no cell 25: this battery has 24 cells. Check that this is the right battery."]}


def test_it_takes_block_voltages_for_a_sealed_pair(token_client, sealed_battery):
    body = reading_body(situation="rested", temp=None, hours_since_charge="24",
                        cells=[{"position": 1, "volts": "12.84"}, {"position": 2, "volts": "12.62"}])
    response = post_json(token_client, url(sealed_battery), body)
    assert response.status_code == 201
    assert response.json()["volts_total"] == 25.46
    assert response.json()["soc_basis"] == "ocv"


def test_the_api_refuses_just_equalized_for_a_sealed_battery_with_422(token_client, sealed_battery):
    body = reading_body(situation="equalized", temp=None, hours_since_charge="24",
                        cells=[{"position": 1, "volts": "12.84"}, {"position": 2, "volts": "12.62"}])
    response = post_json(token_client, url(sealed_battery), body)
    assert response.status_code == 422
    assert response.json()["errors"]["situation"] == [validation.SEALED_NOT_EQUALIZED]
    assert not Inspection.objects.exists()


def test_it_refuses_an_implausible_block_voltage_with_the_forms_message(token_client, sealed_battery):
    body = reading_body(situation="rested", temp=None,
                        cells=[{"position": 1, "volts": "1.2"}, {"position": 2, "volts": "12.62"}])
    response = post_json(token_client, url(sealed_battery), body)
    assert response.status_code == 422
    assert response.json()["errors"]["volts_1"][0].startswith("1.2 V is not plausible for a 6-cell block")


def test_it_refuses_a_retired_battery_with_409(token_client, battery):
    Battery.objects.filter(pk=battery.pk).update(status=Battery.Status.RETIRED)
    response = post_json(token_client, url(battery), reading_body())
    assert response.status_code == 409
    message = "TW-001 was retired: it takes no more readings. Check the serial number."
    assert response.json()["errors"]["__all__"] == [message]
    assert Inspection.objects.count() == 0


def test_it_refuses_a_client_uuid_already_used_for_another_battery(token_client, battery, sealed_battery):
    body = reading_body()
    assert post_json(token_client, url(battery), body).status_code == 201
    response = post_json(token_client, url(sealed_battery), body)
    assert response.status_code == 409
    assert "client_uuid" in response.json()["errors"]
    assert Inspection.objects.count() == 1


def test_another_sites_battery_answers_404(token_client, other_battery):
    response = post_json(token_client, url(other_battery), reading_body())
    assert response.status_code == 404
    assert Inspection.objects.count() == 0


def test_a_pilot_cell_reading_takes_one_cell(token_client, battery):
    body = reading_body(scope="pilot", cells=[{"position": 1, "sg": "1.281"}])
    response = post_json(token_client, url(battery), body)
    assert response.status_code == 201
    assert response.json()["scope"] == "pilot" and response.json()["sg_spread"] == 0.0


def test_a_malformed_body_gets_errors_in_the_same_shape(token_client, battery):
    response = post_json(token_client, url(battery), {"situation": "boiling", "cells": []})
    assert response.status_code == 422
    errors = response.json()["errors"]
    assert {"client_uuid", "situation", "taken_at"} <= set(errors)
    assert Inspection.objects.count() == 0


def test_it_takes_sg_as_json_numbers_in_points_or_in_full(token_client, battery):
    cells = [{"position": i, "sg": 285 if i % 2 else 1.285} for i in range(1, 25)]
    response = post_json(token_client, url(battery), reading_body(cells=cells, temp=25))
    assert response.status_code == 201
    assert {c["sg"] for c in response.json()["cells"]} == {1.285}

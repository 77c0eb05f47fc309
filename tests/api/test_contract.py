"""The API keeps the contract its OpenAPI document states: types, ranges, answers, and one body per client UUID."""
import uuid

import pytest

from fleetcare.readings.models import Inspection, WaterTopUp
from tests.api.conftest import post_json, reading_body

DOCUMENTED = {"400", "401", "403", "404", "409", "422"}


def top_up(**overrides):
    return {"client_uuid": str(uuid.uuid4()), "done_at": "2026-11-30T08:00", "volume": "4.8", **overrides}


def test_every_operation_documents_its_error_answers(token_client):
    document = token_client.get("/api/openapi.json").json()
    for path, operations in document["paths"].items():
        for method, operation in operations.items():
            assert DOCUMENTED <= set(operation["responses"]), f"{method.upper()} {path}"


def test_the_schema_states_ranges_and_refuses_booleans_for_numbers(token_client):
    schemas = token_client.get("/api/openapi.json").json()["components"]["schemas"]
    volume = schemas["TopUpIn"]["properties"]["volume"]["anyOf"]
    assert {"type": "integer", "exclusiveMinimum": 0, "maximum": 100000} in volume
    assert {"type": "number", "exclusiveMinimum": 0, "maximum": 100000} in volume
    text = next(v for v in volume if v.get("type") == "string")
    assert "pattern" in text and text["maxLength"] == 24


@pytest.mark.parametrize("field", ["volume", "notes_as_number"])
def test_a_boolean_or_a_wrong_type_is_refused_and_nothing_is_stored(token_client, battery, field):
    body = top_up(volume=True) if field == "volume" else top_up(notes=5)
    response = post_json(token_client, f"/api/batteries/{battery.pk}/top-ups", body)
    assert response.status_code == 422
    assert WaterTopUp.objects.count() == 0


def test_a_boolean_cell_value_or_temperature_is_refused(token_client, battery):
    body = reading_body(temp=True)
    assert post_json(token_client, f"/api/batteries/{battery.pk}/inspections", body).status_code == 422
    body = reading_body()
    body["cells"][0]["sg"] = True
    assert post_json(token_client, f"/api/batteries/{battery.pk}/inspections", body).status_code == 422
    assert Inspection.objects.count() == 0


def test_numbers_as_text_still_work_as_the_crew_types_them(token_client, battery):
    response = post_json(token_client, f"/api/batteries/{battery.pk}/top-ups", top_up(volume="4,8"))
    assert response.status_code in (201, 422)  # the form decides about the comma; never a 500
    response = post_json(token_client, f"/api/batteries/{battery.pk}/top-ups", top_up(volume=4.8))
    assert response.status_code == 201


def test_a_reused_client_uuid_with_another_body_answers_409_and_stores_nothing(token_client, battery):
    url = f"/api/batteries/{battery.pk}/top-ups"
    first = top_up()
    assert post_json(token_client, url, first).status_code == 201
    again = post_json(token_client, url, first)
    assert again.status_code == 201
    changed = post_json(token_client, url, {**first, "volume": "9.6"})
    assert changed.status_code == 409
    assert "client_uuid" in changed.json()["errors"]
    assert list(WaterTopUp.objects.values_list("volume_ml", flat=True)) == [4800]


def test_a_reused_client_uuid_with_other_readings_answers_409(token_client, battery):
    url = f"/api/batteries/{battery.pk}/inspections"
    body = reading_body()
    assert post_json(token_client, url, body).status_code == 201
    assert post_json(token_client, url, body).status_code == 201
    body["cells"][3]["sg"] = "270"
    response = post_json(token_client, url, body)
    assert response.status_code == 409
    assert Inspection.objects.count() == 1


def test_a_get_with_a_bad_parameter_does_not_talk_about_saving(token_client):
    response = token_client.get("/api/batteries", {"include_retired": "perhaps"})
    assert response.status_code == 422
    assert "saved" not in response.json()["detail"]
    assert "include_retired" in response.json()["errors"]


def test_an_empty_pilot_reading_is_refused_on_a_sealed_battery(token_client, sealed_battery):
    body = reading_body(scope="pilot", situation="rested", cells=[], temp="20")
    response = post_json(token_client, f"/api/batteries/{sealed_battery.pk}/inspections", body)
    assert response.status_code == 422
    assert Inspection.objects.count() == 0


def test_an_empty_reading_is_refused_on_a_flooded_battery(token_client, battery):
    for scope in ("pilot", "all"):
        body = reading_body(scope=scope, cells=[])
        assert post_json(token_client, f"/api/batteries/{battery.pk}/inspections", body).status_code == 422
    assert Inspection.objects.count() == 0


def test_an_impossible_time_is_refused_with_a_message_not_a_500(token_client, battery):
    body = top_up(done_at="2024-01-01T12:99:00Z")  # found by schemathesis
    response = post_json(token_client, f"/api/batteries/{battery.pk}/top-ups", body)
    assert response.status_code == 422
    assert "done_at" in response.json()["errors"]
    body = top_up(done_at="0001-01-01T00:30:00+05:00")  # a year-1 time with an offset
    assert post_json(token_client, f"/api/batteries/{battery.pk}/top-ups", body).status_code == 422
    assert WaterTopUp.objects.count() == 0

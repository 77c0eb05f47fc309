"""The API records how a reading's battery was picked: another program is "api"; FleetCare's tablet says its own."""
from fleetcare.readings.models import Inspection
from tests.api.conftest import post_json, reading_body


def test_another_program_sending_through_the_api_is_recorded_as_such(token_client, battery):
    response = post_json(token_client, f"/api/batteries/{battery.pk}/inspections", reading_body())
    assert response.status_code == 201 and response.json()["chosen_via"] == "api"
    assert Inspection.objects.get().chosen_via == "api"


def test_the_tablet_sending_a_kept_reading_through_the_api_keeps_its_scan(token_client, battery):
    response = post_json(token_client, f"/api/batteries/{battery.pk}/inspections", reading_body(chosen_via="scan"))
    assert response.status_code == 201
    assert Inspection.objects.get().chosen_via == "scan"


def test_the_api_refuses_a_way_in_a_tablet_cannot_have_used(token_client, battery):
    response = post_json(token_client, f"/api/batteries/{battery.pk}/inspections", reading_body(chosen_via="import"))
    assert response.status_code == 422
    assert "chosen_via" in response.json()["errors"]
    assert not Inspection.objects.exists()

"""POST /api/batteries/{id}/top-ups: the water form's checks, stored once per client UUID."""
import uuid
from decimal import Decimal

from fleetcare.fleet.models import Site
from fleetcare.readings.models import WaterTopUp
from tests.api.conftest import post_json


def body(**overrides):
    data = {"client_uuid": str(uuid.uuid4()), "done_at": "2026-11-30T08:00", "volume": "4.8"}
    data.update(overrides)
    return data


def test_it_stores_a_top_up_in_millilitres(token_client, battery):
    response = post_json(token_client, f"/api/batteries/{battery.pk}/top-ups", body())
    assert response.status_code == 201
    assert response.json()["volume_ml"] == 4800.0
    assert WaterTopUp.objects.get().volume_ml == Decimal("4800.0")


def test_it_converts_us_fluid_ounces_per_cell(token_client, battery):
    Site.objects.filter(pk=battery.site_id).update(volume_unit=Site.VolumeUnit.US_FL_OZ)
    response = post_json(token_client, f"/api/batteries/{battery.pk}/top-ups", body(volume="10", per_cell=True))
    assert response.status_code == 201
    # 1 US fl oz = 29.5735295625 mL (NIST Handbook 44, from memory); 10 oz x 24 cells = 7097.6 mL.
    assert response.json()["volume_ml"] == 7097.6
    assert response.json()["volume_entered"] == "10 US fl oz per cell"


def test_the_same_top_up_twice_stores_one_and_gets_the_same_answer(token_client, battery):
    data = body()
    first = post_json(token_client, f"/api/batteries/{battery.pk}/top-ups", data)
    second = post_json(token_client, f"/api/batteries/{battery.pk}/top-ups", data)
    assert (first.status_code, second.status_code) == (201, 201)
    assert first.content == second.content
    assert WaterTopUp.objects.count() == 1


def test_it_refuses_water_for_a_sealed_battery_with_the_forms_message(token_client, sealed_battery):
    response = post_json(token_client, f"/api/batteries/{sealed_battery.pk}/top-ups", body())
    assert response.status_code == 422
    assert response.json()["errors"] == {"__all__": ["This battery is sealed: it must not be watered."]}


def test_it_refuses_an_implausible_amount_beside_the_volume(token_client, battery):
    response = post_json(token_client, f"/api/batteries/{battery.pk}/top-ups", body(volume="60"))
    assert response.status_code == 422
    assert response.json()["errors"] == {"volume": ["That is over 2 L a cell: check the amount and its unit."]}


def test_another_sites_battery_answers_404(token_client, other_battery):
    response = post_json(token_client, f"/api/batteries/{other_battery.pk}/top-ups", body())
    assert response.status_code == 404
    assert WaterTopUp.objects.count() == 0

import uuid
from decimal import Decimal

from django.urls import reverse

from fleetcare.readings.models import WaterTopUp


def data(**extra):
    return {"done_at": "2026-11-30T07:30", "volume": "2.4", "water_type": "distilled",
            "client_uuid": str(uuid.uuid4()), **extra}


def test_it_stores_a_whole_battery_top_up_in_millilitres(crew_client, battery):
    response = crew_client.post(reverse("readings:top_up", args=[battery.pk]), data())
    assert response.status_code == 302
    top_up = WaterTopUp.objects.get()
    assert top_up.volume_ml == Decimal("2400.0")
    assert top_up.volume_entered == "2.4 L"
    assert top_up.volume_ml_per_cell == Decimal("100")


def test_a_per_cell_amount_is_multiplied_by_the_cells(crew_client, battery):
    crew_client.post(reverse("readings:top_up", args=[battery.pk]), data(volume="0.1", per_cell="on"))
    assert WaterTopUp.objects.get().volume_ml == Decimal("2400.0")


def test_us_fluid_ounces_are_converted(crew_client, battery):
    battery.site.volume_unit = "floz"
    battery.site.save()
    crew_client.post(reverse("readings:top_up", args=[battery.pk]), data(volume="100"))
    # 100 US fl oz × 29.5735295625 mL = 2957.4 mL
    assert WaterTopUp.objects.get().volume_ml == Decimal("2957.4")


def test_a_sealed_battery_cannot_be_watered(crew_client, sealed_battery):
    response = crew_client.post(reverse("readings:top_up", args=[sealed_battery.pk]), data(), follow=True)
    assert "TR-P01 has sealed blocks: they are never watered." in response.content.decode()
    assert response.redirect_chain == [(reverse("readings:inspect", args=[sealed_battery.pk]), 302)]
    assert WaterTopUp.objects.count() == 0


def test_an_absurd_volume_is_refused_beside_the_field(crew_client, battery):
    response = crew_client.post(reverse("readings:top_up", args=[battery.pk]), data(volume="2400"))
    assert "over 2 L a cell" in response.context["form"].errors["volume"][0]
    assert WaterTopUp.objects.count() == 0


def test_the_same_uuid_twice_stores_once(crew_client, battery):
    payload = data()
    crew_client.post(reverse("readings:top_up", args=[battery.pk]), payload)
    crew_client.post(reverse("readings:top_up", args=[battery.pk]), payload)
    assert WaterTopUp.objects.count() == 1

import uuid
from decimal import Decimal

import pytest
from django.urls import reverse

from fleetcare.readings.models import CellReading, Inspection

# A just-charged 24-cell tray at 30 °C: cell 9 reads 40 points low.
SG_POINTS = ["272"] * 24
SG_POINTS[8] = "232"


def post_data(battery, points=SG_POINTS, temp="30", **extra):
    data = {
        "situation": "charged", "scope": "all", "taken_at": "2026-11-30T06:15", "temp": temp,
        "client_uuid": str(uuid.uuid4()), "notes": "",
    }
    for n, value in enumerate(points, start=1):
        data[f"sg_{n}"] = value
    data.update(extra)
    return data


def test_it_sends_anonymous_users_to_sign_in(client, battery):
    response = client.get(reverse("readings:inspect", args=[battery.pk]))
    assert response.status_code == 302
    assert response["Location"].startswith("/accounts/login/")


def test_it_shows_a_box_per_cell_with_a_numeric_keypad(crew_client, battery):
    response = crew_client.get(reverse("readings:inspect", args=[battery.pk]))
    html = response.content.decode()
    assert response.status_code == 200
    assert html.count('data-autoadvance="sg"') == 24
    assert 'inputmode="numeric"' in html
    assert "explosive hydrogen" in html  # the cautions are on the entry screen


def test_a_full_inspection_stores_every_cell_with_corrected_sg(crew_client, battery):
    response = crew_client.post(reverse("readings:inspect", args=[battery.pk]), post_data(battery))
    inspection = Inspection.objects.get()
    assert response.status_code == 302
    assert response["Location"] == reverse("readings:inspection", args=[inspection.pk])
    cells = list(inspection.cells.order_by("position"))
    assert len(cells) == 24
    # 1.272 observed at 30 °C, corrected to 25 °C at 0.0007/°C: 1.272 + 0.0035 = 1.2755 -> 1.276 (half up)
    assert cells[0].sg == Decimal("1.272")
    assert cells[0].sg_corrected == Decimal("1.276")
    assert cells[8].sg_corrected == Decimal("1.236")
    assert inspection.lowest_position == 9
    assert inspection.sg_spread == Decimal("0.040")
    # Summaries use the corrected SGs as shown (to 0.001), so a hand check of the table agrees:
    # mean of 23 × 1.276 and 1 × 1.236 = 1.27433; SOC = (1.27433 - 1.140) / (1.290 - 1.140) = 89.6 %
    assert inspection.sg_mean == Decimal("1.274")
    assert inspection.soc_percent == Decimal("89.6")


def test_the_result_page_shows_soc_spread_and_the_lowest_cell(crew_client, battery):
    crew_client.post(reverse("readings:inspect", args=[battery.pk]), post_data(battery))
    response = crew_client.get(reverse("readings:inspection", args=[Inspection.objects.get().pk]))
    html = response.content.decode()
    assert "90 %" in html
    assert "40 points" in html
    assert "cell 9" in html


@pytest.mark.parametrize("points", [["1265"] * 24, ["1.265"] * 24, ["265"] * 24])
def test_it_reads_sg_as_points_or_decimals(crew_client, battery, points):
    crew_client.post(reverse("readings:inspect", args=[battery.pk]), post_data(battery, points=points, temp="25"))
    assert set(CellReading.objects.values_list("sg", flat=True)) == {Decimal("1.265")}


def test_an_out_of_range_sg_is_named_beside_its_cell_and_nothing_is_stored(crew_client, battery):
    points = list(SG_POINTS)
    points[4] = "400"
    response = crew_client.post(reverse("readings:inspect", args=[battery.pk]), post_data(battery, points=points))
    assert response.status_code == 200
    assert response.context["form"].errors["sg_5"] == ["1.400 is outside 1.000–1.350. Check the hydrometer reading."]
    assert "Nothing was saved" in response.content.decode()
    assert Inspection.objects.count() == 0 and CellReading.objects.count() == 0


def test_a_missing_cell_is_reported_and_nothing_is_stored(crew_client, battery):
    points = list(SG_POINTS)
    points[23] = ""
    response = crew_client.post(reverse("readings:inspect", args=[battery.pk]), post_data(battery, points=points))
    assert "Cell 24 is empty" in response.context["form"].errors["sg_24"][0]
    assert Inspection.objects.count() == 0


@pytest.mark.parametrize("temp,ok", [("-30", True), ("70", True), ("-31", False), ("71", False), ("", False)])
def test_electrolyte_temperature_must_be_plausible(crew_client, battery, temp, ok):
    response = crew_client.post(reverse("readings:inspect", args=[battery.pk]), post_data(battery, temp=temp))
    assert Inspection.objects.exists() is ok
    if not ok:
        assert "temp" in response.context["form"].errors


def test_a_fahrenheit_site_enters_fahrenheit_and_stores_celsius(crew_client, battery):
    battery.site.temp_unit = "F"
    battery.site.save()
    crew_client.post(reverse("readings:inspect", args=[battery.pk]), post_data(battery, temp="86"))
    assert Inspection.objects.get().temp_c == Decimal("30.0")


def test_the_same_uuid_submitted_twice_stores_once(crew_client, battery):
    data = post_data(battery)
    first = crew_client.post(reverse("readings:inspect", args=[battery.pk]), data)
    second = crew_client.post(reverse("readings:inspect", args=[battery.pk]), data)
    assert Inspection.objects.count() == 1
    assert CellReading.objects.count() == 24
    assert first["Location"] == second["Location"]


def test_a_pilot_reading_stores_one_cell(crew_client, battery):
    data = post_data(battery, points=[], scope="pilot")
    data[f"sg_{battery.pilot_cell}"] = "250"
    crew_client.post(reverse("readings:inspect", args=[battery.pk]), data)
    inspection = Inspection.objects.get()
    assert inspection.scope == "pilot"
    assert inspection.cells.count() == 1


def test_sealed_blocks_take_voltages_and_reject_implausible_ones(crew_client, sealed_battery):
    url = reverse("readings:inspect", args=[sealed_battery.pk])
    base = {"situation": "rested", "scope": "all", "taken_at": "2026-11-30T08:00", "temp": "21",
            "hours_since_charge": "12", "client_uuid": str(uuid.uuid4())}
    response = crew_client.post(url, base | {"volts_1": "12.71", "volts_2": "127.1"})
    assert "not plausible for a 6-cell block" in response.context["form"].errors["volts_2"][0]
    assert Inspection.objects.count() == 0
    crew_client.post(url, base | {"volts_1": "12.71", "volts_2": "12.69"})
    inspection = Inspection.objects.get()
    assert inspection.volts_total == Decimal("25.40")
    assert inspection.soc_basis == "ocv"
    # 12.70 V per block on the sealed table (12.60 V = 75 %, 12.85 V = 100 %): 75 + 25 × 0.10/0.25 = 85 %
    assert inspection.soc_percent == Decimal("85.0")


def test_a_voltage_taken_soon_after_charge_gives_no_soc(crew_client, sealed_battery):
    crew_client.post(reverse("readings:inspect", args=[sealed_battery.pk]), {
        "situation": "charged", "scope": "all", "taken_at": "2026-11-30T08:00", "temp": "21",
        "hours_since_charge": "0.5", "client_uuid": str(uuid.uuid4()), "volts_1": "13.10", "volts_2": "13.05"})
    inspection = Inspection.objects.get()
    assert inspection.soc_percent is None


def test_another_sites_battery_answers_404(crew_client, other_battery):
    assert crew_client.get(reverse("readings:inspect", args=[other_battery.pk])).status_code == 404


def test_the_situation_can_be_preset_by_a_link(crew_client, battery):
    response = crew_client.get(reverse("readings:inspect", args=[battery.pk]) + "?situation=equalized")
    assert response.context["form"]["situation"].value() == "equalized"
    html = response.content.decode()
    assert '<option value="equalized" selected>' in html


def test_a_retired_battery_takes_no_readings(crew_client, battery):
    battery.status = "retired"
    battery.save()
    response = crew_client.post(reverse("readings:inspect", args=[battery.pk]), post_data(battery))
    assert "This battery is retired" in response.content.decode()
    assert Inspection.objects.count() == 0


def test_the_admin_cannot_edit_readings_in_place(client, django_user_model, battery, crew_client):
    crew_client.post(reverse("readings:inspect", args=[battery.pk]), post_data(battery))
    inspection = Inspection.objects.get()
    admin = django_user_model.objects.create_superuser("root1", password="not-a-real-password-1")
    client.force_login(admin)
    page = client.get(reverse("admin:readings_inspection_change", args=[inspection.pk]))
    assert page.status_code == 200
    assert b'name="situation"' not in page.content  # shown, not editable
    client.post(reverse("admin:readings_inspection_change", args=[inspection.pk]), {"situation": "rested"})
    inspection.refresh_from_db()
    assert inspection.situation == "charged"

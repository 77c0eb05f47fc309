"""The supervisor's week per charging room: days x shift windows, chargers and airflow used and available."""
from decimal import Decimal

from django.urls import reverse


def test_the_week_shows_each_room_with_chargers_and_airflow_in_words(warehouse, client, supervisor):
    client.force_login(supervisor)
    response = client.get(reverse("planner:plan", args=["tw"]))
    assert response.status_code == 200
    text = response.content.decode()
    assert "Room 1" in text and "Night" in text and "Early" in text
    # one equalizing charge a night: the spare beyond the reserve; normal charging of four 24-cell 775 Ah trays
    # 4 x 0.055 x 24 x 15.5 A = 81.84 m³/h + equalizing 0.055 x 24 x 38.75 A = 51.15 m³/h (IEC/EN 62485-3, 25 °C)
    assert "Chargers 1 / 2 · Airflow 133 / 250 m³/h" in text
    assert "Chargers 0 / 2 · Airflow 82 / 250 m³/h" in text
    # worst moment 132.99 m³/h; natural ventilation 28 x 132.99 = 3,724 cm² inlet and outlet
    assert "the room needs\n    <strong>133 m³/h</strong>" in text
    assert "<strong>3724 cm²</strong>" in text
    assert "0.055·n·I_gas·C/100" in text and "ZVEI information leaflet No. 14" in text
    assert "TW-F001" in text
    assert "Calendar" in text and reverse("planner:plan_ics", args=["tw"]) in text


def test_the_second_week_is_shown_on_request(warehouse, client, supervisor):
    client.force_login(supervisor)
    text = client.get(reverse("planner:plan", args=["tw"]) + "?week=1").content.decode()
    assert 'aria-current="page">Week 2<' in text
    assert client.get(reverse("planner:plan", args=["tw"]) + "?week=x").status_code == 200


def test_it_warns_when_normal_charging_already_fills_the_ventilation(warehouse, client, supervisor):
    warehouse["room"].airflow_m3h = Decimal(60)
    warehouse["room"].save()
    client.force_login(supervisor)
    text = client.get(reverse("planner:plan", args=["tw"])).content.decode()
    assert "No room for equalizing" in text and "Normal charging alone needs 82 m³/h" in text
    assert "Could not be planned" in text


def test_another_sites_week_answers_404(client, supervisor, other_site):
    client.force_login(supervisor)
    assert client.get(reverse("planner:plan", args=["other"])).status_code == 404

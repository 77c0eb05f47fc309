"""The supervisor's week per charging room: days x shift windows, chargers and airflow used and available."""
from decimal import Decimal

from django.urls import reverse


def test_the_week_shows_each_room_with_chargers_and_airflow_in_words(warehouse, client, supervisor):
    client.force_login(supervisor)
    response = client.get(reverse("planner:plan", args=["tw"]))
    assert response.status_code == 200
    text = response.content.decode()
    assert "Room 1" in text and "Night" in text and "Early" in text
    # one equalizing charge a night: the spare beyond the reserve; 75.0 m³/h normal charging + 46.9 equalizing
    assert "Chargers 1 / 2 · Airflow 122 / 250 m³/h" in text
    assert "Chargers 0 / 2 · Airflow 75 / 250 m³/h" in text
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
    assert "No room for equalizing" in text and "Normal charging alone needs 75 m³/h" in text
    assert "Could not be planned" in text


def test_another_sites_week_answers_404(client, supervisor, other_site):
    client.force_login(supervisor)
    assert client.get(reverse("planner:plan", args=["other"])).status_code == 404

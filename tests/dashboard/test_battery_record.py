import datetime as dt
import json
import re

from django.urls import reverse

from tests.dashboard.conftest import read, water


def figure(html, element_id):
    found = re.search(rf'<script type="application/json" id="{element_id}-data">(.*?)</script>', html, re.DOTALL)
    return json.loads(found.group(1)) if found else None


def test_the_heat_map_shows_a_weak_cell_as_a_stripe_and_marks_the_lowest_cell(crew_client, battery, crew, now):
    for days in (21, 14, 7):
        read(battery, crew, now - dt.timedelta(days=days), "charged", weak=(9, "1.240"))
    read(battery, crew, now - dt.timedelta(days=1), "before_charge", sg="1.160", scope="pilot")  # pilot: not in the map
    fig = figure(crew_client.get(reverse("fleet:battery", args=[battery.pk])).content.decode(), "chart-heatmap")
    heat, marks = fig["data"]
    assert len(heat["x"]) == 3 and heat["y"][8] == "Cell 9"
    assert heat["z"][8] == [1.24, 1.24, 1.24] and heat["z"][0] == [1.29, 1.29, 1.29]
    assert marks["name"] == "Lowest cell" and marks["y"] == ["Cell 9"] * 3
    assert fig["layout"]["yaxis"]["dtick"] == 1  # every cell labelled, not every other one


def test_a_pilot_reading_shows_no_spread(crew_client, battery, crew, now):
    read(battery, crew, now - dt.timedelta(hours=1), "before_charge", sg="1.160", scope="pilot")
    html = crew_client.get(reverse("fleet:battery", args=[battery.pk])).content.decode()
    assert "spread" not in html.split("Latest:")[1].split("</p>")[0]


def test_the_record_charts_soc_over_time_and_water_per_cell_per_month(crew_client, battery, crew, now):
    read(battery, crew, now - dt.timedelta(days=3), "charged")
    water(battery, crew, now - dt.timedelta(days=2), 2400)
    html = crew_client.get(reverse("fleet:battery", args=[battery.pk])).content.decode()
    assert figure(html, "chart-soc")["data"][0]["y"] == [100.0]
    assert figure(html, "chart-water")["data"][0]["y"] == [100]  # 2,400 mL over 24 cells

import datetime as dt
import json
import re

import pytest
from django.db import connection
from django.test.utils import CaptureQueriesContext
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


def test_the_charts_reach_back_a_year_unless_asked_for_more(crew_client, battery, crew, now):
    read(battery, crew, now - dt.timedelta(days=500), "charged", sg="1.215")  # (1.215 - 1.140) / 0.150 = 50 %
    read(battery, crew, now - dt.timedelta(days=3), "charged")
    water(battery, crew, now - dt.timedelta(days=500), 1200)
    url = reverse("fleet:battery", args=[battery.pk])
    html = crew_client.get(url).content.decode()
    assert figure(html, "chart-soc")["data"][0]["y"] == [100.0]
    assert figure(html, "chart-water") is None
    assert '<strong aria-current="true">Last 12 months</strong>' in html and "(1 reading)" in html
    html = crew_client.get(url, {"months": "36"}).content.decode()
    assert figure(html, "chart-soc")["data"][0]["y"] == [50.0, 100.0]
    assert figure(html, "chart-water")["data"][0]["y"] == [50]  # 1,200 mL over 24 cells
    assert figure(crew_client.get(url, {"months": "banana"}).content.decode(), "chart-soc")["data"][0]["y"] == [100.0]


def test_the_readings_table_is_paged_newest_first(crew_client, battery, crew, now):
    for hours in range(55):
        read(battery, crew, now - dt.timedelta(hours=hours + 1), "before_charge", sg="1.200", scope="pilot")
    url = reverse("fleet:battery", args=[battery.pk])
    first = crew_client.get(url)
    assert len(first.context["inspections"]) == 50 and first.context["inspection_count"] == 55
    assert first.context["latest"] == first.context["inspections"][0]
    assert "page 1 of 2" in first.content.decode()
    second = crew_client.get(url, {"page": "2"}).context
    assert len(second["inspections"]) == 5
    assert second["inspections"][-1].taken_at == min(i.taken_at for i in battery.inspections.all())
    assert len(crew_client.get(url, {"page": "99"}).context["inspections"]) == 5  # past the end: the last page


@pytest.mark.parametrize("who", ["crew", "supervisor"])  # a supervisor's page lists top-ups to remove too
def test_the_record_takes_the_same_queries_however_long_the_history(request, client, who, battery, crew, now):
    client.force_login(request.getfixturevalue(who))

    def count():
        with CaptureQueriesContext(connection) as queries:
            assert client.get(reverse("fleet:battery", args=[battery.pk])).status_code == 200
        return len(queries)

    read(battery, crew, now - dt.timedelta(days=2), "charged")
    water(battery, crew, now - dt.timedelta(days=2), 1200)
    count()  # the first visit may store the budget's default assumptions
    few = count()
    for days in range(3, 40):
        read(battery, crew, now - dt.timedelta(days=days), "charged")
        water(battery, crew, now - dt.timedelta(days=days), 1200)
    assert count() == few


def test_the_water_chart_starts_at_the_first_of_the_spans_first_month(battery, crew):
    from fleetcare.dashboard.battery_selectors import battery_record

    now = dt.datetime(2026, 11, 20, 12, 0, tzinfo=dt.UTC)  # a 12-month span starts about 20 Nov 2025
    water(battery, crew, dt.datetime(2025, 11, 5, 9, 0, tzinfo=dt.UTC), 2400)  # same month: counted in full
    water(battery, crew, dt.datetime(2025, 10, 25, 9, 0, tzinfo=dt.UTC), 2400)  # month before: left out
    chart = battery_record(battery, months=12, now=now)["water_chart"]
    assert chart["data"][0]["x"] == ["2025-11"] and chart["data"][0]["y"] == [100]

import datetime as dt

import pytest
from django.urls import reverse

from fleetcare.care.models import Finding
from fleetcare.dashboard import battery_selectors as selectors
from fleetcare.fleet.models import Battery
from tests.dashboard.conftest import read, water

LIST = reverse("fleet:batteries")


def serials(response):
    return [b.serial for b in response.context["page"].object_list]


@pytest.fixture
def super_client(client, supervisor):
    client.force_login(supervisor)
    return client


@pytest.fixture
def three(battery, sealed_battery, traction_profile, site, supervisor, now):
    """TW-001 at 10 % at rest and equalized yesterday; TW-002 at 100 %, watered yesterday, past design life;
    the sealed pair unread."""
    read(battery, supervisor, now - dt.timedelta(days=1), "equalized")
    read(battery, supervisor, now - dt.timedelta(hours=2), "rested", sg="1.155", scope="pilot")
    old = Battery.objects.create(
        serial="TW-002", profile=traction_profile, site=site, in_service_date=dt.date(2019, 1, 1)
    )
    read(old, supervisor, now - dt.timedelta(hours=5), "charged", sg="1.290")
    water(old, supervisor, now - dt.timedelta(days=1), 2400)
    return battery, old, sealed_battery


@pytest.mark.parametrize(
    "query, expected",
    [
        ({}, ["TR-P01", "TW-001", "TW-002"]),
        ({"soc": "below20"}, ["TW-001"]),
        ({"soc": "80up"}, ["TW-002"]),
        ({"soc": "none"}, ["TR-P01"]),
        ({"overdue": "equalizing"}, ["TW-002"]),
        ({"overdue": "watering"}, ["TW-001"]),
        ({"past_life": "1"}, ["TW-002"]),
        ({"site": "tr"}, ["TR-P01"]),
        ({"q": "FL-01"}, ["TW-001"]),
        ({"sort": "-soc"}, ["TW-002", "TW-001", "TR-P01"]),  # no reading sorts last either way
        ({"sort": "soc"}, ["TW-001", "TW-002", "TR-P01"]),
        ({"sort": "-serial"}, ["TW-002", "TW-001", "TR-P01"]),
        ({"soc": "nonsense", "sort": "nonsense"}, ["TR-P01", "TW-001", "TW-002"]),  # unknown values are ignored
    ],
)
def test_it_filters_and_sorts(super_client, three, query, expected):
    assert serials(super_client.get(LIST, query)) == expected


def test_it_filters_by_profile_and_status_and_hides_retired_unless_asked(
    super_client, battery, sealed_battery, traction_profile, site
):
    Battery.objects.create(
        serial="TW-OLD", profile=traction_profile, site=site, status="retired", in_service_date=dt.date(2015, 1, 1)
    )
    assert serials(super_client.get(LIST, {"profile": traction_profile.pk})) == ["TW-001"]
    assert serials(super_client.get(LIST, {"status": "retired"})) == ["TW-OLD"]


def test_it_filters_by_open_finding_kind(super_client, battery, sealed_battery, now):
    Finding.objects.create(battery=battery, kind="weak_cell", opened_at=now, last_seen_at=now)
    Finding.objects.create(
        battery=sealed_battery, kind="weak_cell", state="cleared", opened_at=now, last_seen_at=now, cleared_at=now
    )
    assert serials(super_client.get(LIST, {"finding": "weak_cell"})) == ["TW-001"]


def test_it_never_lists_another_sites_batteries(super_client, battery, other_battery):
    assert serials(super_client.get(LIST, {"site": "other"})) == []


def test_it_pages_fifty_at_a_time_keeping_the_filters(super_client, site, traction_profile):
    Battery.objects.bulk_create(
        [
            Battery(serial=f"P-{k:03d}", profile=traction_profile, site=site, in_service_date=dt.date(2024, 1, 1))
            for k in range(55)
        ]
    )
    first = super_client.get(LIST, {"sort": "-serial"})
    assert len(serials(first)) == selectors.LIST_PAGE_SIZE == 50
    assert 'href="?sort=-serial&amp;page=2"' in first.content.decode()
    assert serials(super_client.get(LIST, {"sort": "-serial", "page": 2})) == [f"P-{k:03d}" for k in range(4, -1, -1)]


def test_a_column_heading_sorts_and_a_second_click_reverses(super_client, battery):
    html = super_client.get(LIST, {"soc": "none"}).content.decode()
    assert 'href="?soc=none&amp;sort=soc"' in html
    html = super_client.get(LIST, {"soc": "none", "sort": "soc"}).content.decode()
    assert 'aria-sort="ascending"' in html and 'href="?soc=none&amp;sort=-soc"' in html


def test_every_count_on_the_overview_opens_a_list_of_exactly_that_many(super_client, build_fleet, three, now):
    Finding.objects.create(battery=three[2], kind="weak_block", opened_at=now, last_seen_at=now)
    build_fleet(2)
    checked = 0
    for section in super_client.get("/").context["sections"]:
        for row in section["rows"]:
            for cell in row["cells"]:
                listed = super_client.get(cell["url"]).context["page"].paginator.count
                assert listed == cell["count"], (row["label"], cell["where"])
                checked += 1
    assert checked > 40


@pytest.mark.parametrize("size", [3, 30])
def test_the_list_is_read_in_a_fixed_number_of_queries(super_client, build_fleet, size, django_assert_max_num_queries):
    build_fleet(size)
    with django_assert_max_num_queries(9):
        assert super_client.get(LIST, {"overdue": "watering", "past_life": "1", "sort": "-soc"}).status_code == 200
    with django_assert_max_num_queries(9):
        assert super_client.get(LIST, {"finding": "weak_cell", "soc": "80up"}).status_code == 200

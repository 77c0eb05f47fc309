"""A supervisor of a London site and a Chicago site (°F, US fl oz): every time typed is stored at the moment
meant on that battery's own site clock and shown back the same on every page and export; every temperature
and water amount is in the battery's site's units."""
import datetime as dt
import re
import uuid
import zoneinfo
from decimal import Decimal

import pytest
from django.urls import reverse
from django.utils import timezone

from fleetcare.accounts.roles import SUPERVISOR
from fleetcare.fleet.models import Battery, ChargingRoom, ShiftWindow, Site
from fleetcare.readings.models import Inspection, WaterTopUp
from tests.conftest import make_user
from tests.planner.test_calendar import check_calendar, props

CHICAGO = zoneinfo.ZoneInfo("America/Chicago")
UTC = dt.UTC


@pytest.fixture
def chicago(db):
    return Site.objects.create(name="Chicago DC", code="chi", timezone="America/Chicago", temp_unit="F", volume_unit="floz")


@pytest.fixture
def chicago_battery(chicago, traction_profile):
    room = ChargingRoom.objects.create(site=chicago, name="Dock room", chargers=4, equalizing_chargers=2,
                                       airflow_m3h=Decimal("60"))
    ShiftWindow.objects.create(site=chicago, name="Night", starts_at=dt.time(22, 0), hours=Decimal("7.5"))
    return Battery.objects.create(serial="CH-001", profile=traction_profile, site=chicago, charging_room=room,
                                  in_service_date=dt.date(2024, 1, 15))


@pytest.fixture
def both(client, django_user_model, site, chicago, battery, chicago_battery):
    user = make_user(django_user_model, "two-sites", SUPERVISOR, [site, chicago])
    client.force_login(user)
    return client


def reading(battery, taken_at, temp="25", **extra):
    data = {"situation": "charged", "scope": "all", "taken_at": taken_at, "temp": temp,
            "client_uuid": str(uuid.uuid4()), "notes": ""}
    data.update({f"sg_{n}": "280" for n in range(1, battery.profile.positions + 1)})
    data.update(extra)
    return data


def post_reading(client, battery, taken_at, **extra):
    return client.post(reverse("readings:inspect", args=[battery.pk]), reading(battery, taken_at, **extra))


def text(response):
    assert response.status_code == 200
    return response.content.decode()


def test_a_time_typed_at_chicago_is_stored_at_that_chicago_moment_and_shown_back_everywhere(both, battery, chicago_battery):
    assert post_reading(both, chicago_battery, "2026-01-12T01:55").status_code == 302
    assert post_reading(both, battery, "2026-01-12T01:55").status_code == 302
    at_chicago = Inspection.objects.get(battery=chicago_battery)
    at_london = Inspection.objects.get(battery=battery)
    assert at_chicago.taken_at == dt.datetime(2026, 1, 12, 7, 55, tzinfo=UTC)  # CST is UTC−6 in January
    assert at_london.taken_at == dt.datetime(2026, 1, 12, 1, 55, tzinfo=UTC)  # GMT is UTC in January

    assert "12 Jan 2026 01:55 CST" in text(both.get(reverse("readings:inspection", args=[at_chicago.pk])))
    assert "12 Jan 2026 01:55 GMT" in text(both.get(reverse("readings:inspection", args=[at_london.pk])))
    record = text(both.get(reverse("fleet:battery", args=[chicago_battery.pk])))
    assert "12 Jan 2026 01:55" in record and "America/Chicago" in record
    listing = text(both.get(reverse("fleet:batteries")))
    assert "12 Jan 2026 01:55 CST" in listing and "12 Jan 2026 01:55 GMT" in listing  # one page, each in its own site's time
    export = text(both.get(reverse("readings:export_csv", args=[chicago_battery.pk])))
    assert ",2026-01-12T01:55-06:00,charged,1," in export
    correct = text(both.get(reverse("readings:correct", args=[at_chicago.pk])))
    assert 'value="2026-01-12T01:55"' in correct


def test_the_time_box_starts_at_now_on_the_batterys_site_clock(both, chicago_battery):
    page = text(both.get(reverse("readings:inspect", args=[chicago_battery.pk])))
    shown = dt.datetime.fromisoformat(re.search(r'name="taken_at"[^>]*value="([^"]+)"', page).group(1))
    chicago_now = timezone.now().astimezone(CHICAGO).replace(tzinfo=None)
    assert abs(shown - chicago_now) < dt.timedelta(minutes=2)


def test_todays_work_shows_a_top_up_at_the_time_typed_at_its_site(both, chicago_battery):
    typed = timezone.now().astimezone(CHICAGO).replace(second=0, microsecond=0, tzinfo=None)
    response = both.post(reverse("readings:top_up", args=[chicago_battery.pk]), {
        "done_at": typed.strftime("%Y-%m-%dT%H:%M"), "volume": "16", "water_type": "distilled",
        "client_uuid": str(uuid.uuid4()), "notes": "",
    })
    assert response.status_code == 302
    stored = WaterTopUp.objects.get()
    assert stored.done_at == typed.replace(tzinfo=CHICAGO).astimezone(UTC)
    today = text(both.get(reverse("planner:today", args=["chi"])))
    assert f"at {typed:%H:%M} by" in today
    assert "(16.0 US fl oz)" in today


def test_the_calendar_says_each_task_in_the_sites_own_time(both, chicago_battery):
    response = both.get(reverse("planner:plan_ics", args=["chi"]))
    assert response.status_code == 200
    events = check_calendar(response.content)
    assert events, "a battery never watered or equalized is due"
    for event in events:
        p = props(event)
        start = dt.datetime.strptime(p["DTSTART"], "%Y%m%dT%H%M%SZ").replace(tzinfo=UTC).astimezone(CHICAGO)
        assert f"Site time {start:%a} {start.day} {start:%b %H:%M}" in p["DESCRIPTION"] and "America/Chicago" in p["DESCRIPTION"]
        if p["SUMMARY"].startswith("Equalizing"):
            assert start.time() == dt.time(22, 0)  # the Night window opens at 22:00 on Chicago clocks


@pytest.mark.parametrize(("which", "typed"), [("chicago", "2026-03-08T02:30"), ("london", "2026-03-29T01:30")])
def test_a_time_the_clocks_skipped_is_refused_beside_the_box(both, battery, chicago_battery, which, typed):
    target = chicago_battery if which == "chicago" else battery
    response = post_reading(both, target, typed)
    assert response.status_code == 200
    assert "did not happen at" in response.content.decode()
    assert "the clocks went forward past it" in response.content.decode()
    assert not Inspection.objects.exists()


@pytest.mark.parametrize(("which", "typed", "stored", "shown"), [
    # 01:30 happens twice on the fall-back night; long after both, the later one (standard time) is meant.
    ("chicago", "2026-11-01T01:30", dt.datetime(2026, 11, 1, 7, 30, tzinfo=UTC), "01:30 CST"),
    ("london", "2026-10-25T01:30", dt.datetime(2026, 10, 25, 1, 30, tzinfo=UTC), "01:30 GMT"),
])
def test_a_time_the_clocks_showed_twice_is_stored_once_and_labelled(both, battery, chicago_battery, which, typed, stored, shown):
    target = chicago_battery if which == "chicago" else battery
    assert post_reading(both, target, typed).status_code == 302
    inspection = Inspection.objects.get()
    assert inspection.taken_at == stored
    assert shown in text(both.get(reverse("readings:inspection", args=[inspection.pk])))


def test_a_fahrenheit_site_reads_in_fahrenheit_and_fluid_ounces_everywhere(both, chicago_battery):
    assert post_reading(both, chicago_battery, "2026-01-12T01:55", temp="77").status_code == 302
    inspection = Inspection.objects.get()
    assert inspection.temp_c == Decimal("25.0")  # (77 − 32) / 1.8
    assert both.post(reverse("readings:top_up", args=[chicago_battery.pk]), {
        "done_at": "2026-01-12T02:10", "volume": "48", "water_type": "distilled", "client_uuid": str(uuid.uuid4()),
    }).status_code == 302
    assert WaterTopUp.objects.get().volume_ml == Decimal("1419.5")  # 48 × 29.5735 mL

    result = text(both.get(reverse("readings:inspection", args=[inspection.pk])))
    assert "77.0 °F" in result and "°C" not in result
    record = both.get(reverse("fleet:battery", args=[chicago_battery.pk]))
    page = text(record)
    assert "<th>Temp °F</th>" in page and "<td>77.0</td>" in page
    assert "48.0 US fl oz" in page and "US fl oz per cell" in page
    assert "<td>2.0</td>" in page  # 1419.5 mL over 24 cells = 59.1 mL = 2.0 US fl oz a cell
    assert record.context["water_chart"]["layout"]["yaxis"]["title"]["text"] == "US fl oz per cell"
    assert record.context["water_chart"]["data"][0]["y"] == [2.0]

    overview = both.get(reverse("dashboard:home") + "?site=chi")
    assert overview.context["water_chart"]["layout"]["yaxis"]["title"]["text"] == "US fl oz per cell"

    export = text(both.get(reverse("readings:export_csv", args=[chicago_battery.pk]))).splitlines()
    header = export[0].split(",")
    assert header == ["serial", "taken_at", "situation", "cell", "sg", "temp_f", "volts", "level", "sg_corrected",
                      "inspection_soc_percent"]  # the unit is in the header, as the import reads it back
    first = dict(zip(header, export[1].split(",")))
    assert first["temp_f"] == "77.0"


def test_a_fahrenheit_export_imports_back_as_the_same_readings(both, chicago_battery):
    from fleetcare.readings.csv_io import import_readings

    assert post_reading(both, chicago_battery, "2026-01-12T01:55", temp="77").status_code == 302
    exported = text(both.get(reverse("readings:export_csv", args=[chicago_battery.pk])))
    Inspection.objects.all().delete()
    user = chicago_battery.site.members.get()
    report = import_readings(exported, user=user, batteries=Battery.objects.all())
    assert report.ok
    again = Inspection.objects.get()
    assert again.taken_at == dt.datetime(2026, 1, 12, 7, 55, tzinfo=UTC)
    assert again.temp_c == Decimal("25.0")


def test_the_csv_import_refuses_a_skipped_time_and_reads_a_repeated_one_as_the_forms_do(both, chicago_battery):
    from fleetcare.readings.csv_io import import_readings

    user = chicago_battery.site.members.get()
    header = "serial,taken_at,situation,cell,sg,temp,volts,level\n"

    def rows(taken):
        return "".join(f"CH-001,{taken},charged,{n},1.280,77,,ok\n" for n in range(1, 25))

    report = import_readings(header + rows("2026-03-08T02:30"), user=user, batteries=Battery.objects.all())
    assert not report.ok and not Inspection.objects.exists()
    assert "did not happen at Chicago DC (America/Chicago)" in str(report.errors)
    report = import_readings(header + rows("2026-11-01T01:30"), user=user, batteries=Battery.objects.all())
    assert report.ok
    assert Inspection.objects.get().taken_at == dt.datetime(2026, 11, 1, 7, 30, tzinfo=UTC)  # as the form stores it


def test_a_celsius_site_keeps_celsius_and_litres(both, battery):
    assert post_reading(both, battery, "2026-01-12T01:55", temp="25").status_code == 302
    inspection = Inspection.objects.get()
    assert "25.0 °C" in text(both.get(reverse("readings:inspection", args=[inspection.pk])))
    export = text(both.get(reverse("readings:export_csv", args=[battery.pk]))).splitlines()
    first = dict(zip(export[0].split(","), export[1].split(",")))
    assert first["temp_c"] == "25.0"
    assert first["taken_at"] == "2026-01-12T01:55+00:00"


def test_the_overview_of_sites_with_different_units_says_so(both):
    overview = both.get(reverse("dashboard:home"))
    assert overview.context["water_chart"]["layout"]["yaxis"]["title"]["text"] == "mL per cell (your sites use different units)"


def test_findings_from_two_sites_each_show_their_own_clock(both, battery, chicago_battery):
    from fleetcare.care.models import Finding

    moment = dt.datetime(2026, 7, 1, 12, 0, tzinfo=UTC)
    for b in (battery, chicago_battery):
        Finding.objects.create(battery=b, kind="low_level", severity=2, opened_at=moment, last_seen_at=moment,
                               summary="test low level")
    page = text(both.get(reverse("care:findings")))
    assert "opened 1 Jul 2026 13:00 BST" in page and "opened 1 Jul 2026 07:00 CDT" in page


def test_the_equalizing_screen_shows_fahrenheit_at_a_fahrenheit_site(both, chicago_battery):
    from fleetcare.planner.models import EqualizingCharge, EqualizingReading

    user = chicago_battery.site.members.get()
    charge = EqualizingCharge.objects.create(battery=chicago_battery, by=user, started_at=timezone.now() - dt.timedelta(hours=1))
    EqualizingReading.objects.create(charge=charge, taken_at=timezone.now(), sg=Decimal("1.280"), temp_c=Decimal("30.0"),
                                     sg_corrected=Decimal("1.284"), basis="pilot")
    page = text(both.get(reverse("planner:equalizing", args=[chicago_battery.pk])))
    assert '<th scope="col">°F</th>' in page and "<td>86.0</td>" in page  # 30 °C = 86 °F
    assert "Electrolyte temperature (°F)" in page

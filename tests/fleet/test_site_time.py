"""One clock per site: the zone of a thing is its site's, and typed local times become the moment meant."""
import datetime as dt
import zoneinfo

import pytest
from django import forms

from fleetcare.fleet import site_time
from fleetcare.fleet.models import Site

CHICAGO = zoneinfo.ZoneInfo("America/Chicago")
LONDON = zoneinfo.ZoneInfo("Europe/London")
UTC = dt.UTC


@pytest.fixture
def chicago(db):
    return Site.objects.create(name="Chicago DC", code="chi", timezone="America/Chicago", temp_unit="F", volume_unit="floz")


def test_zone_of_follows_a_battery_and_its_readings_to_their_site(battery, site):
    from fleetcare.readings.models import Inspection

    reading = Inspection(battery=battery, taken_at=dt.datetime(2026, 6, 1, tzinfo=UTC))
    assert site_time.zone_of(site) == LONDON
    assert site_time.zone_of(battery) == LONDON
    assert site_time.zone_of(reading) == LONDON
    assert site_time.zone_of(battery.charging_room) == LONDON
    assert site_time.zone_of(CHICAGO) == CHICAGO


def test_zone_of_refuses_an_object_without_a_site():
    with pytest.raises(ValueError):
        site_time.zone_of(object())


def test_a_typed_time_is_that_moment_on_the_site_clock(chicago):
    # 01:55 in Chicago in winter (CST, UTC−6) is 07:55 UTC.
    moment = site_time.to_moment(dt.datetime(2026, 1, 12, 1, 55), chicago)
    assert moment.astimezone(UTC) == dt.datetime(2026, 1, 12, 7, 55, tzinfo=UTC)


@pytest.mark.parametrize(("zone", "gap"), [
    # Spring forward: US clocks jump 02:00 -> 03:00 on 8 Mar 2026; UK clocks 01:00 -> 02:00 on 29 Mar 2026.
    (CHICAGO, dt.datetime(2026, 3, 8, 2, 30)),
    (LONDON, dt.datetime(2026, 3, 29, 1, 30)),
])
def test_a_time_the_clocks_skipped_is_refused_with_a_message(zone, gap):
    with pytest.raises(site_time.NonexistentLocalTime, match="did not happen"):
        site_time.to_moment(gap, zone)


@pytest.mark.parametrize(("zone", "fold", "first_utc", "second_utc"), [
    # Fall back: US 02:00 CDT -> 01:00 CST on 1 Nov 2026, so 01:30 is 06:30 UTC and again 07:30 UTC;
    # UK 02:00 BST -> 01:00 GMT on 25 Oct 2026, so 01:30 is 00:30 UTC and again 01:30 UTC.
    (CHICAGO, dt.datetime(2026, 11, 1, 1, 30), dt.datetime(2026, 11, 1, 6, 30, tzinfo=UTC), dt.datetime(2026, 11, 1, 7, 30, tzinfo=UTC)),
    (LONDON, dt.datetime(2026, 10, 25, 1, 30), dt.datetime(2026, 10, 25, 0, 30, tzinfo=UTC), dt.datetime(2026, 10, 25, 1, 30, tzinfo=UTC)),
])
def test_a_time_the_clocks_showed_twice_is_the_later_once_it_has_passed(zone, fold, first_utc, second_utc):
    during_first = first_utc + dt.timedelta(minutes=5)
    during_second = second_utc + dt.timedelta(minutes=5)
    next_day = second_utc + dt.timedelta(days=1)
    assert site_time.to_moment(fold, zone, now=during_first) == first_utc
    assert site_time.to_moment(fold, zone, now=during_second) == second_utc
    assert site_time.to_moment(fold, zone, now=next_day) == second_utc


def test_the_hours_beside_a_skipped_hour_are_kept(chicago):
    assert site_time.to_moment(dt.datetime(2026, 3, 8, 1, 59), chicago).astimezone(UTC).hour == 7  # CST
    assert site_time.to_moment(dt.datetime(2026, 3, 8, 3, 0), chicago).astimezone(UTC).hour == 8  # CDT


class _TimeForm(forms.Form):
    at = site_time.SiteDateTimeField()


def test_the_time_box_reads_and_shows_in_its_zone(chicago):
    form = _TimeForm({"at": "2026-07-01T01:55"})
    form.fields["at"].zone = chicago
    assert form.is_valid(), form.errors
    assert form.cleaned_data["at"] == dt.datetime(2026, 7, 1, 6, 55, tzinfo=UTC)  # CDT, UTC−5
    shown = _TimeForm(initial={"at": dt.datetime(2026, 7, 1, 6, 55, tzinfo=UTC)})
    shown.fields["at"].zone = chicago
    assert shown["at"].value() == dt.datetime(2026, 7, 1, 1, 55)


def test_the_time_box_refuses_a_skipped_time_beside_the_box(chicago):
    form = _TimeForm({"at": "2026-03-08T02:30"})
    form.fields["at"].zone = chicago
    assert not form.is_valid()
    assert "did not happen at Chicago DC" in form.errors["at"][0]


def test_the_time_box_takes_an_offset_as_written(chicago):
    form = _TimeForm({"at": "2026-07-01T01:55+00:00"})
    form.fields["at"].zone = chicago
    assert form.is_valid()
    assert form.cleaned_data["at"] == dt.datetime(2026, 7, 1, 1, 55, tzinfo=UTC)


def test_the_time_box_refuses_a_time_out_of_range_without_a_crash(chicago):
    form = _TimeForm({"at": "0001-01-01T00:10"})
    form.fields["at"].zone = zoneinfo.ZoneInfo("Asia/Tokyo")
    assert not form.is_valid()

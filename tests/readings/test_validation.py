"""The one validation of a reading: slips, dates and profile look-alikes, judged the same on the form and the API."""
import datetime as dt
import uuid
from decimal import Decimal

import pytest
from django.urls import reverse
from django.utils import timezone

from fleetcare.readings import validation
from fleetcare.readings.models import Inspection, WaterTopUp
from tests.api.conftest import post_json

NOW = dt.datetime(2026, 12, 3, 9, 0, tzinfo=dt.timezone.utc)
# The slip of the issue: "2833" then "281" for every other cell. The cursor moves on after "283", so
# cell 2 gets "328" and cell 3 takes "1281" as four digits; from there the grid is aligned again.
SLIPPED = ["283", "328", "1281"] + ["281"] * 21


def sgs(points):
    return {p: validation.parse_sg(text)[0] for p, text in enumerate(points, start=1)}


def test_the_repeated_key_slip_marks_cell_2_alone(battery):
    limits = validation.limits_for(battery, NOW)
    suspects = validation.suspect_cells(sgs(SLIPPED), limits)
    assert list(suspects) == [2]
    assert "0.047 above the other cells (median 1.281)" in suspects[2]


def test_thresholds_are_exclusive_and_allow_a_weak_cell_to_be_confirmed(battery):
    limits = validation.limits_for(battery, NOW)
    tray = ["281"] * 24
    tray[4] = "301"  # exactly 0.020 above: not suspect
    tray[9] = "231"  # exactly 0.050 below: not suspect
    assert validation.suspect_cells(sgs(tray), limits) == {}
    tray[4], tray[9] = "302", "230"
    assert list(validation.suspect_cells(sgs(tray), limits)) == [5, 10]
    assert validation.unconfirmed_suspects(sgs(tray), [10], limits).keys() == {5}


def test_a_pilot_cell_is_judged_by_the_profiles_band(battery):
    limits = validation.limits_for(battery, NOW)
    # TW-001: discharged 1.140, full 1.290, each widened by 0.030 -> 1.110 to 1.320
    assert (limits.band_low, limits.band_high) == (Decimal("1.110"), Decimal("1.320"))
    assert validation.suspect_cells({7: Decimal("1.321")}, limits).keys() == {7}
    assert validation.suspect_cells({7: Decimal("1.320")}, limits) == {}


def test_a_tray_reading_like_another_profile_is_refused(battery):
    limits = validation.limits_for(battery, NOW)
    assert "look like another battery's readings" in validation.tray_problem(sgs(["1335"] * 24), limits, "TW-001")
    assert validation.tray_problem(sgs(["285"] * 24), limits, "TW-001") is None


def test_block_voltages_of_another_size_are_named(sealed_battery):
    message = validation.volts_problem(Decimal("25.4"), sealed_battery.profile, "TR-P01")
    assert "looks like a 24 V battery" in message and "TR-P01" in message
    assert validation.volts_problem(Decimal("12.71"), sealed_battery.profile) is None


@pytest.mark.parametrize("when, expected", [
    (NOW + dt.timedelta(minutes=10), None),
    (NOW + dt.timedelta(minutes=11), "Taken at is in the future (more than 10 minutes from now)"),
    (dt.datetime(2024, 1, 15, 0, 0, tzinfo=dt.timezone.utc), None),
    (dt.datetime(2024, 1, 14, 23, 59, tzinfo=dt.timezone.utc), "Taken at is before this battery entered service"),
    (dt.datetime(1, 1, 1, tzinfo=dt.timezone(dt.timedelta(hours=5))), "Taken at: that date cannot be right"),
    (dt.datetime(9999, 12, 31, 23, 59, tzinfo=dt.timezone(dt.timedelta(hours=-5))), "Taken at: that date cannot"),
])
def test_the_date_rule(battery, when, expected):
    problem = validation.date_problem(when, battery, NOW)
    assert problem == expected if expected is None else problem.startswith(expected)


def test_without_a_service_date_the_earliest_is_2000(battery):
    battery.in_service_date = None
    assert validation.date_problem(dt.datetime(1999, 12, 31, 12, tzinfo=dt.timezone.utc), battery, NOW) == \
        "Taken at is before 1 Jan 2000. Check the date."


def form_post(points, **extra):
    data = {"situation": "charged", "scope": "all", "taken_at": "2026-11-30T06:15", "temp": "25",
            "client_uuid": str(uuid.uuid4())}
    data.update({f"sg_{n}": v for n, v in enumerate(points, start=1)})
    data.update(extra)
    return data


def test_the_form_stores_nothing_until_the_slip_is_fixed_or_confirmed(crew_client, battery):
    url = reverse("readings:inspect", args=[battery.pk])
    response = crew_client.post(url, form_post(SLIPPED))
    assert response.status_code == 200
    assert list(response.context["form"].errors) == ["sg_2"]
    assert 'data-cell="2"' in response.content.decode()
    assert Inspection.objects.count() == 0
    assert crew_client.post(url, form_post(SLIPPED, confirm_2="on")).status_code == 302
    assert Inspection.objects.get().cells.get(position=2).sg == Decimal("1.328")


def test_the_api_refuses_an_unconfirmed_suspect_cell_with_422_naming_it(crew_client, battery):
    cells = [{"position": p, "sg": v} for p, v in enumerate(SLIPPED, start=1)]
    body = {"client_uuid": str(uuid.uuid4()), "situation": "charged", "taken_at": "2026-11-30T06:15", "temp": "25",
            "cells": cells}
    response = post_json(crew_client, f"/api/batteries/{battery.pk}/inspections", body)
    assert response.status_code == 422
    assert list(response.json()["errors"]) == ["sg_2"]
    cells[1]["confirmed"] = True
    assert post_json(crew_client, f"/api/batteries/{battery.pk}/inspections", body).status_code == 201


@pytest.mark.parametrize("taken_at", ["2099-01-01T08:00", "0567-03-01T08:00", "0001-01-01T00:00+05:00",
                                      "9999-12-31T23:59-05:00"])
def test_absurd_dates_get_a_message_on_form_and_api(crew_client, battery, taken_at):
    response = crew_client.post(reverse("readings:inspect", args=[battery.pk]),
                                form_post(["281"] * 24, taken_at=taken_at))
    assert response.status_code == 200 and "taken_at" in response.context["form"].errors
    body = {"client_uuid": str(uuid.uuid4()), "situation": "charged", "taken_at": taken_at, "temp": "25",
            "cells": [{"position": p, "sg": "281"} for p in range(1, 25)]}
    response = post_json(crew_client, f"/api/batteries/{battery.pk}/inspections", body)
    assert response.status_code == 422 and "taken_at" in response.json()["errors"]
    top_up = {"client_uuid": str(uuid.uuid4()), "done_at": taken_at, "volume": "2"}
    response = post_json(crew_client, f"/api/batteries/{battery.pk}/top-ups", top_up)
    assert response.status_code == 422 and "done_at" in response.json()["errors"]
    assert Inspection.objects.count() == 0 and WaterTopUp.objects.count() == 0


def test_the_limits_reach_the_page_as_data(crew_client, battery):
    html = crew_client.get(reverse("readings:inspect", args=[battery.pk])).content.decode()
    assert '<script id="fc-limits" type="application/json">' in html
    assert '"slipAbove": 0.02' in html and '"bandHigh": 1.32' in html


# ---- Property tests: crafted dates and numbers on the form and the API never give a 500 and store nothing.
from hypothesis import HealthCheck, given, settings  # noqa: E402
from hypothesis import strategies as st  # noqa: E402

PROPERTY = settings(max_examples=30, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
offsets = st.sampled_from(["", "Z", "+05:00", "-05:00", "+14:00", "-12:00"])
absurd_moments = st.one_of(
    st.datetimes(min_value=dt.datetime(1, 1, 1), max_value=dt.datetime(2023, 12, 31)),  # before service
    st.datetimes(min_value=dt.datetime(2027, 1, 1), max_value=dt.datetime(9999, 12, 31, 23, 59)),  # ahead
)
crafted_numbers = st.one_of(
    st.sampled_from(["NaN", "-Infinity", "1e400", "0x1F", "١٢٦٥", "1_265", "２６５", "-265", "12655", "1.2.6"]),
    st.floats(allow_nan=True, allow_infinity=True).map(str),
    st.integers(min_value=-10**30, max_value=10**30).map(str),
)


@PROPERTY
@given(moment=absurd_moments, offset=offsets)
def test_absurd_dates_never_store_and_never_fail(crew_client, battery, moment, offset):
    stamp = moment.strftime("%Y-%m-%dT%H:%M").rjust(16, "0") + offset
    response = crew_client.post(reverse("readings:inspect", args=[battery.pk]), form_post(["281"] * 24, taken_at=stamp))
    assert response.status_code == 200 and response.context["form"].errors["taken_at"]
    body = {"client_uuid": str(uuid.uuid4()), "situation": "charged", "taken_at": stamp, "temp": "25",
            "cells": [{"position": p, "sg": "281"} for p in range(1, 25)]}
    response = post_json(crew_client, f"/api/batteries/{battery.pk}/inspections", body)
    assert response.status_code == 422 and response.json()["errors"]["taken_at"]
    assert Inspection.objects.count() == 0


@PROPERTY
@given(text=crafted_numbers, position=st.integers(min_value=1, max_value=24), where=st.sampled_from(["sg", "temp"]))
def test_crafted_numbers_get_a_message_never_a_500(crew_client, battery, text, position, where):
    points = ["281"] * 24
    extra = {}
    if where == "sg":
        points[position - 1] = text
    else:
        extra["temp"] = text
    before = Inspection.objects.count()  # examples share the database: valid ones are stored
    response = crew_client.post(reverse("readings:inspect", args=[battery.pk]), form_post(points, **extra))
    cells = [{"position": p, "sg": v} for p, v in enumerate(points, start=1)]
    body = {"client_uuid": str(uuid.uuid4()), "situation": "charged", "taken_at": "2026-11-30T06:15",
            "temp": extra.get("temp", "25"), "cells": cells}
    api = post_json(crew_client, f"/api/batteries/{battery.pk}/inspections", body)
    if response.status_code == 302:  # the text happened to be a valid reading ("-265"-like texts are not)
        assert api.status_code == 201
        return
    assert response.status_code == 200
    errors = response.context["form"].errors
    assert errors and all(errors.values())
    assert api.status_code == 422 and api.json()["errors"]
    assert Inspection.objects.count() == before

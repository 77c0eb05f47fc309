"""Today's list on the tablet: per site, overdue first, one tap into the entry screen, done when the record exists."""
import datetime as dt
from decimal import Decimal

import pytest
from django.db import connection
from django.test.utils import CaptureQueriesContext
from django.urls import reverse

from fleetcare.fleet.models import ShiftWindow
from fleetcare.planner.models import TaskSkip
from fleetcare.planner.selectors import site_days, tasks_for_today, work_due_for_battery
from fleetcare.readings.services import remove_top_up

from .conftest import add_batteries, cared_for, finding, inspect, water


def kinds_for(tasks, battery):
    return sorted(t.kind for t in tasks if t.battery.pk == battery.pk)


def test_it_lists_water_equalize_and_readings_with_overdue_first(warehouse, crew, now):
    trays = warehouse["trays"]
    for b in trays + warehouse["spares"]:
        cared_for(b, crew, now, days_ago=1)
    late = trays[2]
    water(late, crew, now - dt.timedelta(days=10))  # watered 10 days ago: 3 days overdue on a 7-day policy
    for top_up in late.top_ups.filter(done_at__gt=now - dt.timedelta(days=2)):
        remove_top_up(top_up, user=crew, reason="logged on the wrong battery")
    finding(trays[4], "high_spread", now, severity=3)
    tasks = tasks_for_today(crew, now=now)
    assert [(t.battery.serial, t.kind, t.days_overdue) for t in tasks][:2] == [
        ("TW-F003", "water", 3), ("TW-F005", "equalize", 0)]
    assert tasks[1].severity == 3


def test_the_page_gives_one_tap_into_each_entry_screen(warehouse, crew_client, crew, now):
    a, b = warehouse["trays"][:2]
    response = crew_client.get(reverse("planner:today", args=["tw"]))
    assert response.status_code == 200
    page = response.content.decode()
    assert reverse("readings:top_up", args=[a.pk]) in page
    assert reverse("planner:equalizing", args=[a.pk]) in page  # first by serial of those due; one a night
    assert reverse("planner:equalizing", args=[b.pk]) not in page  # planned for a later night
    assert reverse("readings:inspect", args=[a.pk]) + "?scope=all&amp;via=today" in page  # never read: all cells due
    assert "OVERDUE" in page or "DUE TODAY" in page  # state in words, not colour alone


def test_a_task_is_done_when_its_record_exists(warehouse, crew_client, crew, now):
    b = warehouse["trays"][0]
    before = site_days([warehouse["site"]], now)[warehouse["site"].pk]
    assert "water" in kinds_for(before.to_do, b)
    water(b, crew, now - dt.timedelta(minutes=1))
    inspect(b, crew, now - dt.timedelta(minutes=1))
    after = site_days([warehouse["site"]], now)[warehouse["site"].pk]
    assert "water" not in kinds_for(after.tasks, b) and "all_cells" not in kinds_for(after.tasks, b)
    assert {(d.kind, d.battery.pk) for d in after.done} >= {("water", b.pk), ("all_cells", b.pk)}
    page = crew_client.get(reverse("planner:today", args=["tw"])).content.decode()
    assert "Watered" in page and "All cells read" in page


def test_a_pilot_reading_is_due_a_week_after_the_last_reading(warehouse, crew, now):
    b = warehouse["trays"][0]
    inspect(b, crew, now - dt.timedelta(days=8))  # all cells 8 days ago: pilot weekly due, all cells monthly not
    tasks = site_days([warehouse["site"]], now)[warehouse["site"].pk].tasks
    assert "pilot" in kinds_for(tasks, b) and "all_cells" not in kinds_for(tasks, b)
    pilot = next(t for t in tasks if t.battery.pk == b.pk and t.kind == "pilot")
    assert pilot.entry_url.endswith("?scope=pilot&via=today") and pilot.days_overdue == 1


def test_all_cells_are_due_after_an_equalizing_charge(warehouse, crew, now):
    from .conftest import equalized

    b = warehouse["trays"][0]
    inspect(b, crew, now - dt.timedelta(days=2))
    equalized(b, crew, now - dt.timedelta(hours=1))
    task = next(t for t in site_days([warehouse["site"]], now)[warehouse["site"].pk].tasks
                if t.battery.pk == b.pk and t.kind == "all_cells")
    assert "after the equalizing charge" in task.why


def test_skip_keeps_the_task_with_its_reason(warehouse, crew_client, crew):
    b = warehouse["trays"][0]
    response = crew_client.post(reverse("planner:skip", args=["tw"]),
                                {"battery": b.pk, "kind": "water", "reason": "truck out on a job"})
    assert response.status_code == 302
    assert TaskSkip.objects.get().reason == "truck out on a job"
    page = crew_client.get(reverse("planner:today", args=["tw"])).content.decode()
    assert "Not today:</strong> truck out on a job" in page


def test_skip_refuses_another_sites_battery(warehouse, crew_client, other_battery):
    response = crew_client.post(reverse("planner:skip", args=["tw"]),
                                {"battery": other_battery.pk, "kind": "water", "reason": "x"})
    assert response.status_code == 404
    assert crew_client.post(reverse("planner:skip", args=["other"]), {}).status_code == 404


def test_another_sites_list_answers_404(crew_client, other_site):
    assert crew_client.get(reverse("planner:today", args=["other"])).status_code == 404


def test_the_week_view_is_for_supervisors(warehouse, crew_client):
    assert crew_client.get(reverse("planner:plan", args=["tw"])).status_code == 403


def test_the_list_covers_only_the_users_sites(warehouse, crew, other_battery, now):
    ShiftWindow.objects.create(site=other_battery.site, name="Night", starts_at=dt.time(22), hours=Decimal(8))
    serials = {t.battery.serial for t in tasks_for_today(crew, now=now)}
    assert "TW-F001" in serials and "OT-001" not in serials


def test_the_home_page_sends_a_one_site_user_straight_to_its_list(client, django_user_model, site):
    from tests.conftest import make_user

    client.force_login(make_user(django_user_model, "solo", "crew", [site]))
    response = client.get(reverse("planner:home"))
    assert response.status_code == 302 and response["Location"] == reverse("planner:today", args=["tw"])


def test_work_due_for_battery_gives_dated_work(warehouse, crew, now):
    b = warehouse["trays"][0]
    cared_for(b, crew, now, days_ago=1)
    work = {w["kind"]: w for w in work_due_for_battery(b, now=now)}
    assert set(work) >= {"equalize", "water"}
    assert work["equalize"]["due"].tzinfo is not None
    assert work["equalize"]["due"].date() >= (now + dt.timedelta(days=5)).date()


def _count_page(client, path):
    with CaptureQueriesContext(connection) as ctx:
        assert client.get(path).status_code == 200
    return len(ctx.captured_queries)


@pytest.mark.parametrize("extra", [0, 12])
def test_todays_list_takes_a_fixed_number_of_queries(warehouse, traction_profile, crew_client, crew, now, extra):
    more = add_batteries(warehouse["site"], traction_profile, warehouse["room"], extra, prefix="TW-X", start=100)
    for b in more[:4]:
        cared_for(b, crew, now, days_ago=3)
        finding(b, "low_level", now)
    path = reverse("planner:today", args=["tw"])
    _count_page(crew_client, path)  # builds and stores the plan
    counts = _count_page(crew_client, path)
    assert counts == QUERIES_FOR_TODAY


QUERIES_FOR_TODAY = 22


def test_a_supervisor_also_gets_the_week_plan_and_crew_does_not(warehouse, client, crew, supervisor):
    week = reverse("planner:plan", args=["tw"])
    client.force_login(supervisor)
    assert week in client.get(reverse("planner:today", args=["tw"])).content.decode()
    client.force_login(crew)
    assert week not in client.get(reverse("planner:today", args=["tw"])).content.decode()


def test_a_user_with_several_sites_chooses_one(crew_client, site, care_site):
    text = crew_client.get(reverse("planner:home")).content.decode()
    assert reverse("planner:today", args=["tw"]) in text and reverse("planner:today", args=["tr"]) in text
    assert reverse("planner:plan", args=["tw"]) not in text  # the week plan is for supervisors

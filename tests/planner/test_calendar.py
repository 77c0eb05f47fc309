"""The plan as iCalendar (RFC 5545), read back by a strict little parser; the secret feed address."""
import datetime as dt
import re

import pytest
from django.urls import reverse

from fleetcare.planner import solver
from fleetcare.planner import ical
from fleetcare.planner.models import SiteSettings
from fleetcare.planner.services import site_settings


def parse(body: bytes):
    """Components as nested dicts; fails on anything RFC 5545 forbids that this feed could get wrong."""
    assert body.endswith(b"\r\n")
    physical = body[:-2].split(b"\r\n")
    for line in physical:
        assert b"\n" not in line and b"\r" not in line, "bare LF or CR"
        assert len(line) <= 75, f"line longer than 75 octets: {line!r}"
    logical = []
    for line in physical:
        if line.startswith((b" ", b"\t")):
            assert logical, "continuation without a line to continue"
            logical[-1] += line[1:]
        else:
            logical.append(line)
    stack = [{"name": "ROOT", "props": [], "children": []}]
    for raw in logical:
        text = raw.decode("utf-8")
        match = re.fullmatch(r"([A-Z0-9-]+)((?:;[A-Z0-9-]+=[^:;]*)*):(.*)", text)
        assert match, f"not a content line: {text!r}"
        name, value = match.group(1), match.group(3)
        if name == "BEGIN":
            stack.append({"name": value, "props": [], "children": []})
        elif name == "END":
            done = stack.pop()
            assert done["name"] == value, f"END:{value} closes {done['name']}"
            stack[-1]["children"].append(done)
        else:
            stack[-1]["props"].append((name, value))
    assert len(stack) == 1, "unclosed component"
    (calendar,) = stack[0]["children"]
    assert calendar["name"] == "VCALENDAR"
    return calendar


def props(component):
    found = {}
    for name, value in component["props"]:
        assert name not in found or name.startswith("X-"), f"{name} twice"
        found[name] = value
    return found


UTC_TIME = re.compile(r"\d{8}T\d{6}Z")


def check_calendar(body):
    calendar = parse(body)
    head = props(calendar)
    assert head["VERSION"] == "2.0" and head["PRODID"]
    events = [c for c in calendar["children"] if c["name"] == "VEVENT"]
    uids = set()
    for event in events:
        p = props(event)
        for required in ("UID", "DTSTAMP", "DTSTART", "DTEND", "SUMMARY"):
            assert required in p
        assert UTC_TIME.fullmatch(p["DTSTAMP"]) and UTC_TIME.fullmatch(p["DTSTART"]) and UTC_TIME.fullmatch(p["DTEND"])
        assert p["DTEND"] > p["DTSTART"]
        uids.add(p["UID"])
    assert len(uids) == len(events)
    return events


def test_folding_splits_at_75_octets_without_breaking_a_character():
    line = "SUMMARY:" + "Équalizing ünder ventilation – " * 6
    parts = ical.fold(line)
    assert all(len(p.encode()) <= 75 for p in parts)
    assert parts[0] + "".join(p[1:] for p in parts[1:]) == line
    assert all(p.startswith(" ") for p in parts[1:])


def test_text_is_escaped():
    assert ical.escape("a,b;c\\d\ne") == "a\\,b\\;c\\\\d\\ne"


def one_task_event(site, kind, hours, days_overdue, reason):
    """The calendar event of a plan with one task of TW-007, from 22:00 on 30 Mar 2026 (the night the clocks have
    just gone forward in London)."""
    start = dt.datetime(2026, 3, 30, 22, 0)
    task = solver.PlannedTask(
        battery_id=7, serial="TW-007", kind=kind, room_id=1, day=start.date(), start=start,
        end=start + dt.timedelta(hours=hours), due_day=start.date(), days_overdue=days_overdue, severity=0,
        reason=reason,
    )
    plan = solver.Plan(site_id=site.pk, start_date=start.date(), days=7, tasks=(task,), unplaced=(),
                       lower_bound_overdue_days=days_overdue, proven_optimal=True, method="test")
    text = ical.calendar(site, plan, {7: "TW-007"}, dt.datetime(2026, 3, 30, 8, 0, tzinfo=dt.UTC))
    (event,) = check_calendar(text.encode())
    return props(event)


def test_a_plan_with_a_long_reason_gives_a_valid_calendar(site):
    p = one_task_event(site, "equalize", 3, 2, "urgent high-spread finding: spread 0,031 after charge; "
                                              "equalizing every 7 days, last on 2026-03-21")
    assert p["DTSTART"] == "20260330T210000Z"  # 22:00 BST = 21:00 UTC
    assert p["DTEND"] == "20260331T000000Z"
    assert p["SUMMARY"] == "Equalizing charge: TW-007 (2 days overdue)"
    assert "spread 0\\,031" in p["DESCRIPTION"]
    # whole sentences, dates in the one style: a capital, the date in words, a full stop
    assert p["DESCRIPTION"].startswith("Site time Mon 30 Mar 22:00–01:00 BST (Europe/London). Urgent high-spread")
    assert p["DESCRIPTION"].endswith("last on 21 Mar 2026.")


def test_one_day_overdue_is_said_in_whole_words(site):
    p = one_task_event(site, "water", 0.25, 1, "watering every 1 day, last on 2026-03-28")
    assert p["SUMMARY"] == "Water: TW-007 (1 day overdue)"
    assert p["DESCRIPTION"].endswith("Watering every 1 day\\, last on 28 Mar 2026.")  # commas escaped (RFC 5545)


def test_a_findings_whole_summary_reaches_the_calendar(warehouse, client, supervisor, now):
    from fleetcare.care.models import Finding

    summary = ("Spread 31 points after charging: cells 4, 9 and 17 lag the median of the others by more than the "
               "limit of 20 points plus the hydrometer's resolution on two readings in a row")
    assert len(summary) > 100  # the length the calendar once cut at
    Finding.objects.create(battery=warehouse["trays"][0], kind="high_spread", severity=2, opened_at=now,
                           last_seen_at=now, summary=summary)
    client.force_login(supervisor)
    events = check_calendar(client.get(reverse("planner:plan_ics", args=["tw"])).content)
    descriptions = [props(e)["DESCRIPTION"].replace("\\,", ",") for e in events]
    assert any(summary + "." in d for d in descriptions)
    assert not any("…" in d for d in descriptions)


def test_a_supervisor_downloads_the_sites_plan(warehouse, client, supervisor):
    client.force_login(supervisor)
    response = client.get(reverse("planner:plan_ics", args=["tw"]))
    assert response.status_code == 200
    assert response["Content-Type"].startswith("text/calendar")
    events = check_calendar(response.content)
    assert any("Equalizing charge: TW-F001" in props(e)["SUMMARY"] for e in events)
    assert any(props(e)["SUMMARY"].startswith("Water: ") for e in events)


def test_the_secret_feed_works_without_a_session_and_stops_when_renewed(warehouse, client, supervisor):
    token = site_settings(warehouse["site"]).feed_token
    feed = reverse("planner:feed", args=[token])
    assert client.get(feed).status_code == 200
    check_calendar(client.get(feed).content)
    assert client.get(reverse("planner:feed", args=["not-a-token"])).status_code == 404
    client.force_login(supervisor)
    assert client.post(reverse("planner:new_feed_token", args=["tw"])).status_code == 302
    client.logout()
    assert client.get(feed).status_code == 404
    new = SiteSettings.objects.get(site=warehouse["site"]).feed_token
    assert new != token and client.get(reverse("planner:feed", args=[new])).status_code == 200


@pytest.mark.parametrize("role_fixture", ["crew"])
def test_crew_cannot_renew_the_feed_or_download_the_plan(warehouse, client, request, role_fixture):
    client.force_login(request.getfixturevalue(role_fixture))
    assert client.post(reverse("planner:new_feed_token", args=["tw"])).status_code == 403
    assert client.get(reverse("planner:plan_ics", args=["tw"])).status_code == 403

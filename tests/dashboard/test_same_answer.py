"""Every screen that says a battery is overdue for equalizing or watering gives the planner's answer
(fleetcare.planner.due): the overview's counts and links, the battery list's filter, today's work, the week
plan, the API's status and the watering-overdue finding, on the demo fleet and on generated fleets."""
import datetime as dt
import random
from collections import Counter
from decimal import Decimal

import pytest
from django.core.management import call_command
from django.test import Client
from django.urls import reverse
from django.utils import timezone

from fleetcare.api.tokens import create_token
from fleetcare.care import detection
from fleetcare.care.models import Finding
from fleetcare.fleet.models import Battery, BatteryProfile, ChargingRoom, ShiftWindow, Site
from fleetcare.planner import due
from fleetcare.planner import inputs as planner_inputs
from fleetcare.planner.models import EqualizingCharge
from fleetcare.planner.models import Policy as PlanningPolicy
from fleetcare.planner.plans import PLAN_DAYS
from fleetcare.planner.selectors import site_days, week_view
from fleetcare.readings.services import CellEntry, record_inspection, record_top_up

KINDS = {"equalizing": due.EQUALIZE, "watering": due.WATER}
LABELS = {"equalizing": "Equalizing overdue", "watering": "Watering overdue"}


def by_the_rule(sites, now):
    """{kind: {battery pk: days overdue}} from the planner's own inputs and fleetcare.planner.due."""
    found = {kind: {} for kind in KINDS}
    for entry in planner_inputs.build(sites, now, PLAN_DAYS).values():
        for care in entry.inputs.batteries:
            days = {
                "equalizing": due.days_overdue(
                    due.equalizing_due(care, entry.today, care.last_equalized, care.in_service), entry.today),
                "watering": due.days_overdue(
                    due.watering_due(care, entry.today, care.last_watered, care.in_service), entry.today),
            }
            for kind, late in days.items():
                if late:
                    found[kind][care.battery_id] = late
    return found


def overview_and_list(client, sites, kind):
    """The overview's count per site and in all, and the batteries each of its links lists."""
    context = client.get("/").context
    rows = [r for s in context["sections"] if s["title"] == "Care" for r in s["rows"] if r["label"] == LABELS[kind]]
    cells = rows[0]["cells"]
    counts = {s.pk: cells[n]["count"] for n, s in enumerate(sites)}
    listed = set()
    for cell in cells[:-1]:
        page = client.get(cell["url"]).context["page"]
        assert page.paginator.count == cell["count"]
        assert page.paginator.num_pages == 1
        listed |= {b.pk for b in page.object_list}
    direct = client.get(reverse("fleet:batteries"), {"overdue": kind}).context["page"]
    assert {b.pk for b in direct.object_list} == listed and cells[-1]["count"] == len(listed)
    return counts, listed


def first_due_in_plan(plan, kind):
    """{battery pk: the day its first task of `kind` falls due} in a site's plan."""
    first = {}
    for task in sorted(list(plan.tasks) + list(plan.unplaced), key=lambda t: t.due_day):
        if task.kind == kind:
            first.setdefault(task.battery_id, task.due_day)
    return first


def check_every_screen_agrees(client, now):
    api = Client(HTTP_AUTHORIZATION=f"Bearer {create_token(client.user, 'same answer')[1]}")
    sites = list(Site.objects.order_by("name"))
    rule = by_the_rule(sites, now)
    assert rule["equalizing"] and rule["watering"], "the fleet has work overdue of both kinds"
    days = site_days(sites, now)
    site_of = dict(Battery.objects.values_list("pk", "site_id"))
    for kind, code in KINDS.items():
        expected = rule[kind]
        counts, listed = overview_and_list(client, sites, kind)
        assert listed == set(expected)
        assert counts == {s.pk: sum(1 for pk in expected if site_of[pk] == s.pk) for s in sites}
        planned, today_overdue, today_later = {}, {}, set()
        for site in sites:
            view = week_view(site, now=now)
            today = view["entry"].today
            for pk, due_day in first_due_in_plan(view["plan"], code).items():
                if due_day < today:
                    planned[pk] = (today - due_day).days
            for task in days[site.pk].tasks:
                if task.kind == code and task.days_overdue:
                    today_overdue[task.battery.pk] = task.days_overdue
                elif task.kind == code:
                    today_later.add(task.battery.pk)
        assert planned == expected  # the week plan
        assert today_overdue.items() <= expected.items()  # today's work: the overdue ones it has room for today
        assert not today_later & set(expected)
        for pk in sorted(expected)[:12]:
            body = api.get(f"/api/batteries/{pk}/status").json()
            work = {w["kind"]: w for w in body["next_work_due"]}
            assert work[code]["days_overdue"] == expected[pk]  # the API's status
    detection.detect_fleet(now=now)
    finding = set(Finding.objects.active().filter(kind="watering_overdue").values_list("battery_id", flat=True))
    assert finding == set(rule["watering"])
    return rule


@pytest.fixture
def admin_client_all(client, admin_user):
    client.force_login(admin_user)
    client.user = admin_user
    return client


def test_every_screen_gives_the_planners_answer_on_the_demo(admin_client_all, db):
    call_command("demo", "--no-serve", stdout=None)
    rule = check_every_screen_agrees(admin_client_all, timezone.now())
    assert Counter(len(v) > 0 for v in rule.values())[True] == 2


# --- generated fleets ------------------------------------------------------------------------------------------


def generate(seed, user, now):
    """Two sites in different zones, flooded trays and a gel pair that may be equalized, a profile equalized by
    charge count, random histories of equalizing, watering and post-charge readings, some batteries with none."""
    rng = random.Random(seed)
    by_charges = None
    made = []
    for n, zone in enumerate(("Europe/London", "America/Chicago")):
        site = Site.objects.create(name=f"Generated {seed}-{n}", code=f"g{seed}{n}", timezone=zone,
                                   charges_per_day=Decimal(rng.choice(["0.8", "1.0", "1.6"])))
        ShiftWindow.objects.create(site=site, name="Night", starts_at=dt.time(22, 0), hours=Decimal("7"))
        room = ChargingRoom.objects.create(site=site, name="Room", chargers=8, equalizing_chargers=3,
                                           airflow_m3h=Decimal("400"))
        trays = BatteryProfile.objects.create(
            name=f"tray {seed}-{n}", technology="flooded", application="traction", nominal_voltage=24, monoblocks=1,
            cells_per_block=12, capacity_ah=Decimal("500"), full_charge_sg=Decimal("1.290"),
            discharged_sg=Decimal("1.140"))
        counted = BatteryProfile.objects.create(
            name=f"counted tray {seed}-{n}", technology="flooded", application="traction", nominal_voltage=24,
            monoblocks=1, cells_per_block=12, capacity_ah=Decimal("500"), full_charge_sg=Decimal("1.290"),
            discharged_sg=Decimal("1.140"))
        by_charges = by_charges or counted
        PlanningPolicy.objects.create(profile=counted, equalize_every_charges=5, water_every_charges=6)
        if n == 1:
            PlanningPolicy.objects.create(site=site, equalize_every_days=10, water_every_days=5)
        for k in range(14):
            profile = counted if k % 4 == 0 else trays
            battery = Battery.objects.create(
                serial=f"G{seed}-{n}-{k:02d}", profile=profile, site=site, charging_room=room,
                status=rng.choice(["in_service"] * 5 + ["spare", "repair"]),
                in_service_date=now.date() - dt.timedelta(days=rng.choice([3, 6, 9, 40, 400])))
            made.append(battery)
            history(rng, battery, user, now)
    return made


def history(rng, battery, user, now):
    cells = [CellEntry(position=p, sg=Decimal("1.285"), level="ok") for p in range(1, battery.profile.positions + 1)]
    start = dt.datetime.combine(battery.in_service_date, dt.time(12), tzinfo=dt.UTC)
    span = max(1, int((now - start).total_seconds() // 3600) - 2)
    for _ in range(rng.choice([0, 2, 8, 20])):
        when = now - dt.timedelta(hours=rng.randrange(1, min(span, 40 * 24)))
        record_inspection(battery=battery, user=user, taken_at=when, situation=rng.choice(["charged", "charged",
                          "equalized", "before_charge"]), cells=cells, scope="all", temp_c=Decimal("25.0"))
    for _ in range(rng.choice([0, 1, 3])):
        when = now - dt.timedelta(hours=rng.randrange(1, min(span, 20 * 24)))
        record_top_up(battery=battery, user=user, done_at=when, volume_ml=Decimal("900"), volume_entered="0.9 L")
    if rng.random() < 0.3:
        ended = now - dt.timedelta(hours=rng.randrange(1, min(span, 15 * 24)))
        EqualizingCharge.objects.create(battery=battery, by=user, started_at=ended - dt.timedelta(hours=3),
                                        ended_at=ended)


@pytest.mark.parametrize("seed", [7, 31])
def test_every_screen_gives_the_planners_answer_on_a_generated_fleet(admin_client_all, admin_user, seed):
    now = timezone.now()
    generate(seed, admin_user, now)
    check_every_screen_agrees(admin_client_all, now)

"""Every main page, for each role that uses it, passes axe-core with no serious or critical violation.

axe-core (tests/browser/vendor/axe-core, a test tool the app never serves) is evaluated in the page after it has
loaded and its charts are drawn; it checks the page as a screen reader and a keyboard user meet it (WCAG 2 A and
AA rules and axe's best practices).
"""
import datetime as dt
import json
from decimal import Decimal
from pathlib import Path

import pytest
from django.urls import reverse
from django.utils import timezone

from fleetcare.readings.services import CellEntry, record_inspection, record_top_up
from tests.browser.pages import screenshot, sign_in

pytestmark = pytest.mark.browser

AXE = (Path(__file__).parent / "vendor" / "axe-core" / "axe.min.js").read_text()
BLOCKING = ("serious", "critical")


@pytest.fixture
def history(battery, sealed_battery, supervisor):
    """A few weeks of readings, so the overview, the battery record and the budget draw their charts."""
    now = timezone.now()
    for days in (21, 14, 7, 1):
        low = Decimal("1.250") if days == 1 else Decimal("1.270")
        record_inspection(
            battery=battery, user=supervisor, taken_at=now - dt.timedelta(days=days), situation="charged",
            temp_c=Decimal("25"),
            cells=[CellEntry(position=p, sg=low if p == 9 else Decimal("1.285"), level="ok") for p in range(1, 25)],
        )
        record_top_up(battery=battery, user=supervisor, done_at=now - dt.timedelta(days=days, hours=-1),
                      volume_ml=Decimal("4000"))
        record_inspection(
            battery=sealed_battery, user=supervisor, taken_at=now - dt.timedelta(days=days), situation="rested",
            cells=[CellEntry(position=1, volts=Decimal("12.80")), CellEntry(position=2, volts=Decimal("12.55"))],
            hours_since_charge=Decimal("12"),
        )
    return battery


def violations(page):
    """axe-core's serious and critical violations on the page as it stands, one line per element."""
    charts = page.locator(".fc-chart")
    for n in range(charts.count()):
        charts.nth(n).locator(".main-svg").first.wait_for(state="attached")
    if not page.evaluate("() => !!window.axe"):
        page.evaluate(AXE)
    results = page.evaluate(
        "async () => JSON.stringify((await axe.run(document, {resultTypes: ['violations']})).violations)")
    found = []
    for v in json.loads(results):
        if v["impact"] in BLOCKING:
            for node in v["nodes"]:
                found.append(f"{v['id']} ({v['impact']}): {node['target']} {node['failureSummary'][:160]}")
    return found


def check_pages(page, role, urls):
    problems = {}
    for url in urls:
        page.goto(url)
        page.wait_for_load_state("load")
        found = violations(page)
        if found:
            problems[url] = found
            screenshot(page, f"axe-{role}-{url}")
    assert problems == {}, json.dumps(problems, indent=1)


def test_the_crews_pages_pass_axe(tablet, crew, history, site):
    sign_in(tablet, "crew1")
    check_pages(tablet, "crew", [
        reverse("dashboard:home"),
        reverse("fleet:batteries"),
        reverse("fleet:battery", args=[history.pk]),
        reverse("planner:today", args=[site.code]),
        reverse("readings:inspect", args=[history.pk]),
        reverse("labels:scan"),
        reverse("readings:import"),
    ])


def test_the_supervisors_pages_pass_axe(tablet, supervisor, history, site):
    sign_in(tablet, "super1")
    check_pages(tablet, "supervisor", [
        reverse("dashboard:home"),
        reverse("fleet:battery", args=[history.pk]),
        reverse("planner:plan", args=[site.code]),
        reverse("dashboard:settings"),
        reverse("dashboard:settings_site", args=[site.code]),
    ])


def test_the_managers_pages_pass_axe(tablet, manager, history):
    sign_in(tablet, "manager1")
    check_pages(tablet, "manager", [
        reverse("dashboard:home"),
        reverse("budget:home"),
    ])

"""Every main page, for each role that uses it, passes axe-core with no serious or critical violation.

axe-core (tests/browser/vendor/axe-core, a test tool the app never serves) is evaluated in the page after it has
loaded and its charts are drawn; it checks the page as a screen reader and a keyboard user meet it (WCAG 2 A and
AA rules and axe's best practices).
"""
import datetime as dt
import json
import re
from decimal import Decimal
from pathlib import Path

import pytest
from django.urls import reverse
from django.utils import timezone

from fleetcare.budget.services import record_capacity_test
from fleetcare.care.detection import detect_for_batteries
from fleetcare.care.models import Finding
from fleetcare.fleet.models import Battery
from fleetcare.planner import services as equalizing
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
    detect_for_batteries(Battery.objects.filter(pk__in=[battery.pk, sealed_battery.pk]), now=now)
    record_capacity_test(battery=battery, user=supervisor, tested_on=(now - dt.timedelta(days=3)).date(),
                         start_temp_c=Decimal("25"), end_volts_per_cell=Decimal("1.70"), hours_to_end=Decimal("4.5"))
    return battery


def a_finding(battery):
    return Finding.objects.active().filter(battery=battery).order_by("pk").first()


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
        check_here(page, role, url, problems)
    assert problems == {}, json.dumps(problems, indent=1)


def check_here(page, role, name, problems):
    found = violations(page)
    if found:
        problems[name] = found
        screenshot(page, f"axe-{role}-{name}")


def send_empty(page, button, fill=None):
    """Send the page's form with nothing filled in (or only `fill`: {label: text}), so it shows its messages
    (our script's or the server's)."""
    for label, text in (fill or {}).items():
        page.get_by_label(label).fill(text)
    page.get_by_role("button", name=button).click()
    page.wait_for_load_state("load")
    page.locator(".invalid-feedback:visible, .errorlist, .alert-danger").first.wait_for()


def test_the_crews_pages_pass_axe(tablet, crew, history, sealed_battery, site, tmp_path):
    sign_in(tablet, "crew1")
    check_pages(tablet, "crew", [
        reverse("dashboard:home"),
        reverse("fleet:batteries"),
        reverse("fleet:battery", args=[history.pk]),
        reverse("planner:today", args=[site.code]),
        reverse("readings:inspect", args=[history.pk]),
        reverse("labels:scan"),
        reverse("readings:import"),
        reverse("care:findings"),
        reverse("care:finding", args=[a_finding(history).pk]),
        reverse("care:finding", args=[a_finding(sealed_battery).pk]),
        reverse("labels:battery", args=[site.code, history.serial]),
        reverse("planner:equalizing", args=[history.pk]),
        reverse("readings:top_up", args=[history.pk]),
    ])
    problems = {}
    send_empty(tablet, "Save top-up")
    check_here(tablet, "crew", "water form with messages", problems)
    upload = tmp_path / "readings.csv"
    upload.write_text("serial,taken_at,situation,cell,sg,temp,volts,level\n"
                      + "".join(f"TW-001,2026-10-01T08:00,charged,{n},1.280,25,,ok\n" for n in range(1, 25))
                      + "TW-001,2026-10-02T08:00,charged,1,abc,25,,ok\nNO-SUCH,2026-10-02T08:00,charged,1,1.280,25,,ok\n")
    tablet.goto(reverse("readings:import"))
    tablet.set_input_files("#file", str(upload))
    tablet.get_by_role("button", name="Import").click()
    tablet.wait_for_url(re.compile(r"/readings/import/[0-9a-f-]+/$"))
    tablet.wait_for_load_state("load")
    assert "Nothing was imported: 2 problems" in tablet.inner_text("main")
    check_here(tablet, "crew", "import result", problems)
    now = timezone.now()
    charge, _ = equalizing.start_charge(battery=history, user=crew, started_at=now - dt.timedelta(hours=3))
    for hours, sg in ((2, "1.270"), (1, "1.280")):
        equalizing.add_reading(charge=charge, taken_at=now - dt.timedelta(hours=hours), sg=Decimal(sg),
                               temp_c=Decimal("30"))
    tablet.goto(reverse("planner:equalizing", args=[history.pk]))
    tablet.wait_for_load_state("load")
    assert tablet.locator("#equalizing-readings tbody tr").count() == 2
    check_here(tablet, "crew", "equalizing running", problems)
    send_empty(tablet, "Save reading", {"Specific gravity (265 = 1.265)": "9.999", "Electrolyte temperature (°C)": "30"})
    check_here(tablet, "crew", "equalizing reading with messages", problems)
    assert problems == {}, json.dumps(problems, indent=1)


def test_the_supervisors_pages_pass_axe(tablet, supervisor, history, site):
    sign_in(tablet, "super1")
    check_pages(tablet, "supervisor", [
        reverse("dashboard:home"),
        reverse("fleet:battery", args=[history.pk]),
        reverse("planner:plan", args=[site.code]),
        reverse("dashboard:settings"),
        reverse("dashboard:settings_site", args=[site.code]),
        reverse("care:findings"),
        reverse("care:finding", args=[a_finding(history).pk]),
        reverse("labels:print"),
        reverse("budget:capacity_tests"),
    ])
    send_empty(tablet, "Save test")
    problems = {}
    check_here(tablet, "supervisor", "capacity form with messages", problems)
    assert problems == {}, json.dumps(problems, indent=1)


def test_the_managers_pages_pass_axe(tablet, manager, history):
    sign_in(tablet, "manager1")
    check_pages(tablet, "manager", [
        reverse("dashboard:home"),
        reverse("budget:home"),
    ])
    # The check sees a fault when there is one: an image with no text for a screen reader is a critical one.
    tablet.evaluate("() => document.querySelector('main').append(document.createElement('img'))")
    assert any(v.startswith("image-alt (critical)") for v in violations(tablet))

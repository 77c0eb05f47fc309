"""An equalizing charge on the tablet: readings with temperature, the rise per reading, and the screen's call —
stop at the temperature limit, or done when SG no longer rises beyond what the hydrometer can show."""
import datetime as dt
import re

import pytest
from django.utils import timezone

from fleetcare.care.models import Finding
from fleetcare.planner.models import EqualizingReading
from tests.browser.pages import screenshot, sign_in

pytestmark = pytest.mark.browser


def _start(page, battery, began):
    sign_in(page, "crew1")
    page.goto(f"/planner/battery/{battery.pk}/equalizing/")
    page.get_by_role("heading", name=re.compile("Equalizing charge")).wait_for()
    page.fill("input[name=started_at]", _local(battery, began))
    page.get_by_role("button", name="Equalizing charge started").click()
    page.get_by_role("heading", name=re.compile("Running since")).wait_for()


def _local(battery, moment):
    return timezone.localtime(moment, battery.site.tzinfo).strftime("%Y-%m-%dT%H:%M")


def _read(page, battery, when, sg, temp):
    page.fill("input[name=taken_at]", _local(battery, when))
    page.fill("input[name=sg]", sg)
    page.fill("input[name=temp]", temp)
    with page.expect_navigation():
        page.get_by_role("button", name="Save reading").click()
    page.locator("#equalizing-state").wait_for()


def test_an_equalizing_charge_that_levels_within_the_hydrometers_resolution(tablet, crew, battery):
    page = tablet
    began = timezone.now().replace(second=0, microsecond=0) - dt.timedelta(hours=5)
    _start(page, battery, began)
    # hourly pilot-cell readings at the profile's 25 °C; rises of 12, 7, 4 and 2 points: the last three rises
    # within a float hydrometer's 0.005 (field notes, "Measuring well")
    for n, (sg, temp) in enumerate([("266", "31"), ("278", "34"), ("285", "37"), ("289", "38"), ("291", "38")]):
        _read(page, battery, began + dt.timedelta(minutes=60 * (n + 1)), sg, temp)
        state = page.locator("#equalizing-state").inner_text()
        if n < 3:
            assert "Keep equalizing" in state
    screenshot(page, "equalizing-levelled")
    state = page.locator("#equalizing-state").inner_text()
    assert "Specific gravity has stopped rising" in state and "0.005" in state
    rises = page.locator("#equalizing-readings td.fc-rise").all_inner_texts()
    # corrected at 0.0007 per °C above 25 °C (common practice): 1.270, 1.284, 1.293, 1.298, 1.300
    assert [r.strip() for r in rises] == ["–", "+14 points", "+9 points", "+5 points (level)", "+2 points (level)"]
    assert [str(r.sg_corrected) for r in EqualizingReading.objects.order_by("taken_at")] == [
        "1.270", "1.284", "1.293", "1.298", "1.300"]
    page.get_by_role("button", name="End equalizing, then read all cells").click()
    page.wait_for_url(re.compile(r"/inspect/\?scope=all&situation=equalized"))


def test_an_equalizing_charge_that_must_stop_on_temperature(tablet, crew, battery):
    page = tablet
    began = timezone.now().replace(second=0, microsecond=0) - dt.timedelta(hours=4)
    _start(page, battery, began)
    _read(page, battery, began + dt.timedelta(minutes=60), "268", "39")
    assert "Keep equalizing" in page.locator("#equalizing-state").inner_text()
    _read(page, battery, began + dt.timedelta(minutes=120), "276", "45")  # the equalizing limit: 45 °C (from memory)
    state = page.locator("#equalizing-state").inner_text()
    assert "Stop equalizing now" in state and "45 °C" in state
    screenshot(page, "equalizing-stop-at-45")
    _read(page, battery, began + dt.timedelta(minutes=150), "279", "56")  # over the 55 °C absolute limit
    state = page.locator("#equalizing-state").inner_text()
    assert "Stop the charge now: the battery is hot" in state
    assert page.locator("#equalizing-readings tr.table-danger").count() == 2
    screenshot(page, "equalizing-hot")
    finding = Finding.objects.get(battery=battery, kind="hot_battery")
    assert "56 °C" in finding.summary

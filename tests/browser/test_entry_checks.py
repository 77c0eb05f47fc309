"""Entry checks in a real browser (Debian's chromium, Playwright) on a tablet and a phone: a one-digit slip
stores nothing until it is fixed or confirmed on its own box, a real weak cell is kept after one tap,
three keys per cell, the crew screens open without a connection and refuse a bad entry before it is
queued, and nothing scrolls sideways on a phone."""
import re

import pytest
from django.test import Client

from fleetcare.readings.models import Inspection, WaterTopUp
from tests.browser.pages import outbox_count, screenshot

pytestmark = pytest.mark.browser

VIEWPORTS = {
    "tablet": {"viewport": {"width": 800, "height": 1280}, "has_touch": True, "is_mobile": True},
    "phone": {"viewport": {"width": 360, "height": 740}, "has_touch": True, "is_mobile": True},
}


@pytest.fixture(params=sorted(VIEWPORTS))
def device(request, browser, live_server, crew):
    client = Client()
    client.force_login(crew)
    context = browser.new_context(base_url=live_server.url, **VIEWPORTS[request.param])
    context.add_cookies([{"name": "sessionid", "value": client.cookies["sessionid"].value, "url": live_server.url}])
    context.set_default_timeout(15_000)
    page = context.new_page()
    page.viewport_name = request.param
    yield context, page
    context.close()


def key_in(page, keys):
    """Type into the focused box as a crew member would; returns how many keys were pressed."""
    page.keyboard.type(keys)
    return len(keys)


def start_reading(page, battery, temp="25"):
    page.goto(f"/readings/battery/{battery.pk}/inspect/")
    assert page.evaluate("document.activeElement.name") == "temp"
    page.keyboard.type(temp)
    page.keyboard.press("Enter")
    assert page.evaluate("document.activeElement.name") == "sg_1"


def test_a_repeated_key_stores_nothing_until_cell_2_is_fixed(device, battery):
    context, page = device
    start_reading(page, battery)
    keys = key_in(page, "2833") + sum(key_in(page, "281") for _ in range(23))
    assert keys == 73  # 24 cells: 3 keys each, plus the repeated 3
    assert page.evaluate("document.activeElement.id") == "save-inspection"
    cell2 = page.locator(".tray-cell[data-cell='2']")
    assert "0.047 above the other cells" in cell2.inner_text()
    assert cell2.locator(".confirm-toggle").is_visible()
    assert page.locator(".tray-cell.is-suspect").count() == 1
    screenshot(page, f"entry-slip-marked-{page.viewport_name}")
    page.keyboard.press("Enter")  # Save: refused on the tablet, nothing sent
    page.locator("#fc-check-refused").wait_for()
    assert page.evaluate("document.activeElement.name") == "sg_2"
    assert Inspection.objects.count() == 0
    page.keyboard.press("Control+A")
    page.keyboard.type("281")  # fixed: the cursor moves on by itself
    assert page.locator(".tray-cell.is-suspect").count() == 0
    page.click("#save-inspection")
    page.wait_for_url(re.compile(r"/readings/inspection/\d+/"))
    stored = Inspection.objects.get()
    assert set(stored.cells.values_list("sg", flat=True)) == {__import__("decimal").Decimal("1.283"),
                                                            __import__("decimal").Decimal("1.281")}


def test_a_real_weak_cell_is_stored_after_one_confirmation_at_three_keys_a_cell(device, battery):
    context, page = device
    start_reading(page, battery)
    points = ["281"] * 24
    points[4] = "221"  # 0.060 below the others: a real weak cell (invented reading)
    keys = sum(key_in(page, p) for p in points)
    assert keys / 24 == 3
    page.keyboard.press("Enter")
    page.locator("#fc-check-refused").wait_for()
    assert Inspection.objects.count() == 0
    cell5 = page.locator(".tray-cell[data-cell='5']")
    assert "0.060 below the other cells" in cell5.inner_text()
    cell5.get_by_label("Yes, it reads this").click()  # the one tap
    page.click("#save-inspection")
    page.wait_for_url(re.compile(r"/readings/inspection/\d+/"))
    assert str(Inspection.objects.get().cells.get(position=5).sg) == "1.221"


def test_text_that_cannot_be_a_reading_is_marked_where_it_was_typed(device, battery):
    context, page = device
    start_reading(page, battery)
    page.keyboard.type("283")
    page.click("input[name=sg_1]")
    page.keyboard.press("End")
    page.keyboard.type("5")  # "2835" in cell 1
    page.click("input[name=sg_5]")
    assert "2.835 is outside 1.000–1.350" in page.locator(".tray-cell[data-cell='1']").inner_text()
    assert page.locator(".tray-cell[data-cell='2'] .invalid-feedback").count() == 0


def visit_offline(context, page, path, heading):
    page.goto(path)
    page.wait_for_function("() => document.documentElement.dataset.precached !== undefined")
    context.set_offline(True)
    page.goto(path)
    page.get_by_role("heading", name=heading).first.wait_for()


def test_crew_screens_open_offline_and_a_bad_entry_is_refused_before_it_is_queued(device, battery, site):
    context, page = device
    page.goto(f"/readings/battery/{battery.pk}/inspect/")
    page.wait_for_function("() => document.documentElement.dataset.precached !== undefined")
    context.set_offline(True)
    for path, heading in [(f"/planner/{site.code}/today/", "Today's work"),
                          (f"/readings/battery/{battery.pk}/water/", "Water top-up"),
                          (f"/planner/battery/{battery.pk}/equalizing/", "Equalizing"),
                          (f"/readings/battery/{battery.pk}/inspect/?scope=all&situation=equalized", "All-cell reading")]:
        page.goto(path)
        page.get_by_role("heading", name=re.compile(heading)).first.wait_for()
        screenshot(page, f"entry-offline-{path.strip('/').replace('/', '-')}-{page.viewport_name}")
    assert page.locator("select[name=situation]").input_value() == "equalized"

    page.fill("input[name=temp]", "90")  # not an electrolyte temperature
    for position in range(1, 25):
        page.fill(f"input[name=sg_{position}]", "281")
    page.click("#save-inspection")
    page.locator("#fc-check-refused").wait_for()
    assert "between −30 and 70 °C" in page.locator("input[name=temp] ~ .invalid-feedback").first.inner_text()
    page.goto(f"/readings/battery/{battery.pk}/water/")
    page.fill("input[name=volume]", "3")
    page.fill("input[name=done_at]", "2099-01-01T08:00")
    page.get_by_role("button", name="Save top-up").click()
    page.locator("#fc-check-refused").wait_for()
    assert "Done at is in the future" in page.inner_text("#top-up-form")
    assert outbox_count(page) == 0

    page.fill("input[name=done_at]", page.evaluate("() => new Date(Date.now() - new Date().getTimezoneOffset() * 60000)"
                                                   ".toISOString().slice(0, 16)"))
    page.get_by_role("button", name="Save top-up").click()
    page.locator("#fc-outbox").get_by_text("1 waiting to send").wait_for()
    context.set_offline(False)
    page.locator("#fc-outbox").wait_for(state="hidden")
    assert WaterTopUp.objects.get().volume_ml == 3000


def test_nothing_scrolls_sideways_on_the_crew_screens(device, battery, sealed_battery, site):
    context, page = device
    for path in [f"/planner/{site.code}/today/", "/readings/find/", f"/readings/battery/{battery.pk}/inspect/",
                 f"/readings/battery/{battery.pk}/inspect/?scope=pilot", f"/readings/battery/{battery.pk}/water/",
                 f"/planner/battery/{battery.pk}/equalizing/", f"/readings/battery/{sealed_battery.pk}/inspect/",
                 "/readings/find/?q=FL-01", "/readings/find/?q=TR-P01", "/api/outbox/"]:
        page.goto(path)
        wide = page.evaluate("() => document.documentElement.scrollWidth - document.documentElement.clientWidth")
        screenshot(page, f"entry-layout-{path.strip('/').replace('/', '-').replace('?', '-')}-{page.viewport_name}")
        assert wide <= 0, f"{path} scrolls sideways by {wide} px at {page.viewport_size['width']} px"

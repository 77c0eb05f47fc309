"""Scanning a label in a real browser: Debian's chromium (driven by Playwright from pip) with a fake camera
that films a label printed by FleetCare itself (its PDF drawn by pdftoppm, turned into a Y4M video).

Headless chromium on Linux has no BarcodeDetector, so these tests exercise the vendored jsQR path; each
test checks which reader ran. Without /usr/bin/chromium they skip, except under CI=true.
"""
import os
import re

import pytest
from django.test import Client

from fleetcare.fleet.models import Battery
from fleetcare.labels import selectors
from fleetcare.labels.sheets import Label, label_sheet
from fleetcare.readings.models import Inspection
from tests.browser.pages import screenshot
from tests.labels.camera import camera_frame, label_image, write_y4m

pytestmark = pytest.mark.browser

os.environ.setdefault("DJANGO_ALLOW_ASYNC_UNSAFE", "true")  # Playwright's sync API runs an event loop here

CHROMIUM = "/usr/bin/chromium"
CHROMIUM_ARGS = ["--no-sandbox", "--disable-gpu", "--disable-background-networking", "--disable-component-update",
                 "--disable-sync", "--no-first-run", "--use-fake-ui-for-media-stream", "--use-fake-device-for-media-stream"]
POINTS = ["281"] * 24  # an even, just-charged tray (invented readings)


@pytest.fixture(scope="module")
def playwright():
    if not os.access(CHROMIUM, os.X_OK):
        reason = f"no chromium at {CHROMIUM} (apt-get install chromium; Playwright must not download one)"
        if os.environ.get("CI", "").lower() in ("1", "true", "yes"):
            pytest.fail(f"CI=true and {reason}", pytrace=False)
        pytest.skip(reason)
    from playwright.sync_api import sync_playwright

    with sync_playwright() as playwright:
        yield playwright


@pytest.fixture
def filming(playwright, live_server, crew, tmp_path):
    """filming(pdf) -> (context, page): a signed-in crew tablet whose camera sees the label in `pdf`."""
    opened = []

    def start(pdf):
        video = write_y4m(camera_frame(label_image(pdf)), tmp_path / f"label-{len(opened)}.y4m")
        browser = playwright.chromium.launch(executable_path=CHROMIUM, headless=True,
                                             args=CHROMIUM_ARGS + [f"--use-file-for-fake-video-capture={video}"])
        client = Client()
        client.force_login(crew)
        context = browser.new_context(base_url=live_server.url, viewport={"width": 1024, "height": 768}, has_touch=True,
                                      permissions=["camera"])
        context.add_cookies([{"name": "sessionid", "value": client.cookies["sessionid"].value, "url": live_server.url}])
        context.set_default_timeout(45_000)  # generous: a loaded machine decodes few frames a second
        opened.append(browser)
        return context, context.new_page()

    yield start
    for browser in opened:
        browser.close()


def scan_reader(page):
    """Which reader ran: the browser's BarcodeDetector or the vendored jsQR."""
    page.wait_for_function("() => document.documentElement.dataset.scanning === '1'")
    return page.evaluate("() => document.documentElement.dataset.scanPath")


def key_in_reading(page):
    page.fill("input[name=temp]", "25")
    for position, points in enumerate(POINTS, start=1):
        page.fill(f"input[name=sg_{position}]", points)
    page.click("#save-inspection")


def test_scanning_a_label_opens_that_batterys_entry_screen_and_the_reading_says_scanned(filming, live_server, site, battery):
    context, page = filming(selectors.sheet_pdf(site, ["TW-001"], "single", live_server.url))
    page.goto("/readings/find/")
    assert page.evaluate("() => 'BarcodeDetector' in window") is False  # so jsQR reads the code (asked before the
    page.click("#scan-a-label")  # scan screen opens: it leaves as soon as it has read the label)
    page.wait_for_url(re.compile(rf"/readings/battery/{battery.pk}/inspect/\?via=scan$"))
    page.get_by_role("heading", name="All-cell reading · TW-001").wait_for()
    key_in_reading(page)
    page.wait_for_url(re.compile(r"/readings/inspection/\d+/"))
    assert "Battery chosen: label scanned" in page.locator("#chosen-via").inner_text()
    assert Inspection.objects.get().chosen_via == "scan"


def test_the_scan_screen_uses_jsqr_where_the_browser_has_no_barcode_detector(filming, live_server, site, battery):
    pdf = label_sheet([Label("XX-1", "-", "-", "https://elsewhere.example/labels/b/tw/TW-001/")], "single")
    context, page = filming(pdf)
    page.goto("/labels/scan/")
    assert scan_reader(page) == "jsqr"


def test_scanning_works_offline_for_the_batteries_kept_on_the_tablet(filming, live_server, site, battery):
    context, page = filming(selectors.sheet_pdf(site, ["TW-001"], "single", live_server.url))
    page.goto("/readings/find/")
    page.wait_for_function("() => document.documentElement.dataset.precached !== undefined")

    context.set_offline(True)
    page.goto("/labels/scan/")  # the tablet's own copy
    page.wait_for_url(re.compile(rf"/readings/battery/{battery.pk}/inspect/\?via=scan$"))
    page.get_by_role("heading", name="All-cell reading · TW-001").wait_for()
    key_in_reading(page)
    page.locator("#fc-outbox").get_by_text("1 waiting to send").wait_for()
    assert Inspection.objects.count() == 0

    context.set_offline(False)
    page.locator("#fc-outbox").wait_for(state="hidden")
    assert Inspection.objects.get().chosen_via == "scan"  # sent later through the API, still recorded as scanned


def _problem_after_scanning(filming, pdf):
    context, page = filming(pdf)
    page.goto("/labels/scan/")
    problem = page.locator("#scan-problem")
    problem.wait_for(state="visible")
    assert page.url.endswith("/labels/scan/")  # nothing was opened
    return page, problem.inner_text()


def test_a_code_that_is_not_ours_opens_nothing_and_says_so(filming, live_server, site, battery):
    pdf = label_sheet([Label("TW-001", "24 cells", "Test warehouse", "https://elsewhere.example/labels/b/tw/TW-001/")], "single")
    page, message = _problem_after_scanning(filming, pdf)
    assert message == selectors.MESSAGES[selectors.NOT_OURS]
    screenshot(page, "scan-screen-code-not-ours")


def test_a_label_of_another_site_opens_nothing_and_says_so(filming, live_server, other_site, other_battery, battery):
    page, message = _problem_after_scanning(filming, selectors.sheet_pdf(other_site, ["OT-001"], "single", live_server.url))
    assert message == selectors.MESSAGES[selectors.OTHER_SITE].format(site="other")


def test_a_retired_batterys_label_opens_nothing_and_says_so(filming, live_server, site, battery, crew):
    pdf = selectors.sheet_pdf(site, ["TW-001"], "single", live_server.url)  # printed while it was in service
    Battery.objects.filter(pk=battery.pk).update(status=Battery.Status.RETIRED)
    page, message = _problem_after_scanning(filming, pdf)
    assert message == selectors.resolve_label(crew, "tw", "TW-001").message
    assert message.startswith("TW-001 was retired")
    screenshot(page, "scan-screen-retired-battery")

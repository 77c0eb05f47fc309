"""A real browser (Debian's chromium, driven by Playwright from pip) loses the connection in the middle of a
round: the reading is kept on the tablet, shown as waiting, and stored exactly once when the network returns.

Without /usr/bin/chromium these tests skip, except under CI=true, where a missing browser is a failure.
"""
import os

import pytest
from django.test import Client

from fleetcare.readings.models import Inspection

pytestmark = pytest.mark.browser

os.environ.setdefault("DJANGO_ALLOW_ASYNC_UNSAFE", "true")  # Playwright's sync API runs an event loop here

CHROMIUM = "/usr/bin/chromium"
CHROMIUM_ARGS = ["--no-sandbox", "--disable-gpu", "--disable-background-networking", "--disable-component-update",
                 "--disable-sync", "--no-first-run"]
POINTS = ["282"] * 24
POINTS[8] = "251"  # a weak cell 9 (invented readings)


@pytest.fixture(scope="module")
def chromium():
    if not os.access(CHROMIUM, os.X_OK):
        reason = f"no chromium at {CHROMIUM} (apt-get install chromium; Playwright must not download one)"
        if os.environ.get("CI", "").lower() in ("1", "true", "yes"):
            pytest.fail(f"CI=true and {reason}", pytrace=False)
        pytest.skip(reason)
    from playwright.sync_api import sync_playwright

    with sync_playwright() as playwright:
        browser = playwright.chromium.launch(executable_path=CHROMIUM, headless=True, args=CHROMIUM_ARGS)
        yield browser
        browser.close()


@pytest.fixture
def tablet(chromium, live_server, crew):
    """A signed-in crew member's tablet: the session cookie comes from Django's own force_login."""
    client = Client()
    client.force_login(crew)
    context = chromium.new_context(base_url=live_server.url, viewport={"width": 1024, "height": 768}, has_touch=True)
    context.add_cookies([{"name": "sessionid", "value": client.cookies["sessionid"].value, "url": live_server.url}])
    context.set_default_timeout(15_000)
    page = context.new_page()
    yield context, page
    context.close()


def _key_in_reading(page):
    page.fill("input[name=temp]", "26")
    for position, points in enumerate(POINTS, start=1):
        page.fill(f"input[name=sg_{position}]", points)
    page.click("#save-inspection")


def test_a_reading_saved_offline_is_stored_exactly_once_when_the_connection_returns(tablet, battery):
    context, page = tablet
    page.goto(f"/readings/battery/{battery.pk}/inspect/")
    # The service worker is installed and has kept the entry screens (the find page, this battery's pages).
    page.wait_for_function("() => document.documentElement.dataset.precached !== undefined")
    assert int(page.evaluate("() => document.documentElement.dataset.precached")) >= 4

    context.set_offline(True)
    page.reload()  # the entry screen comes from the tablet's own copy
    page.get_by_role("heading", name="All-cell reading · TW-001").wait_for()
    _key_in_reading(page)

    badge = page.locator("#fc-outbox")
    badge.get_by_text("1 waiting to send").wait_for()
    assert "kept on this tablet and waiting to send" in page.locator("#fc-offline-status").inner_text()
    kept = page.evaluate("""() => new Promise(resolve => {
        const open = indexedDB.open("fleetcare-offline", 1);
        open.onsuccess = () => open.result.transaction("outbox").objectStore("outbox").getAll().onsuccess =
            event => resolve(event.target.result.map(item => ({uuid: item.client_uuid, api: item.api, body: item.body})));
    })""")
    kept_uuid = [item["uuid"] for item in kept]
    assert len(kept_uuid) == 1
    assert Inspection.objects.count() == 0
    # The form is ready for the next battery with a new client UUID.
    assert page.input_value("input[name=client_uuid]") != kept_uuid[0]

    context.set_offline(False)
    badge.wait_for(state="hidden")
    assert "is stored" in page.locator("#fc-offline-status").inner_text()
    stored = Inspection.objects.get()
    assert str(stored.client_uuid) == kept_uuid[0]
    assert stored.lowest_position == 9 and stored.battery_id == battery.pk

    # The same submission sent again, byte for byte (a tablet that never heard the answer), stores nothing new;
    # other values under the same client UUID are refused rather than silently taken as a repeat.
    statuses = page.evaluate("""async ([url, body]) => {
        const token = document.cookie.match(/csrftoken=([^;]+)/)[1];
        const send = payload => fetch(url, {method: "POST", credentials: "same-origin",
            headers: {"Content-Type": "application/json", "X-CSRFToken": token}, body: JSON.stringify(payload)});
        const changed = Object.assign({}, body, {temp: "31"});
        return [(await send(body)).status, (await send(body)).status, (await send(changed)).status];
    }""", [kept[0]["api"], kept[0]["body"]])
    assert statuses == [201, 201, 409]
    assert Inspection.objects.count() == 1


def test_a_refused_reading_is_kept_and_shown_until_the_crew_member_deals_with_it(tablet, battery):
    from fleetcare.fleet.models import Battery

    context, page = tablet
    page.goto(f"/readings/battery/{battery.pk}/inspect/")
    context.set_offline(True)
    _key_in_reading(page)
    page.locator("#fc-outbox").get_by_text("1 waiting to send").wait_for()

    Battery.objects.filter(pk=battery.pk).update(status=Battery.Status.RETIRED)  # retired meanwhile
    context.set_offline(False)
    page.locator("#fc-outbox").get_by_text("1 refused: needs you").wait_for()
    assert "was retired" in page.locator("#fc-offline-status").inner_text()
    assert Inspection.objects.count() == 0

    page.goto("/api/outbox/")
    row = page.locator("#outbox-list [data-state=rejected]")
    assert "TW-001 was retired" in row.inner_text()
    page.reload()  # still there: nothing is dropped on its own
    page.locator("#outbox-list [data-state=rejected]").wait_for()
    assert page.locator("#outbox-list [data-state=rejected]").count() == 1

    page.once("dialog", lambda dialog: dialog.accept())
    page.get_by_role("button", name="Discard").click()
    page.locator("#outbox-empty").wait_for(state="visible")
    page.locator("#fc-outbox").wait_for(state="hidden")


def test_a_reading_whose_answer_was_lost_is_resent_and_still_stored_once(tablet, battery):
    """Wi-Fi that drops mid-save: the server stored the reading but the tablet never heard back."""
    context, page = tablet
    page.goto(f"/readings/battery/{battery.pk}/inspect/")

    def store_then_drop_the_answer(route):
        route.fetch()  # reaches the server, which stores the reading
        route.abort("connectionreset")

    page.route("**/inspect/", lambda route: store_then_drop_the_answer(route)
               if route.request.method == "POST" else route.continue_())
    _key_in_reading(page)
    page.locator("#fc-outbox").get_by_text("1 waiting to send").wait_for(timeout=30_000)
    assert Inspection.objects.count() == 1  # stored by the first attempt

    page.unroute("**/inspect/")
    page.goto("/api/outbox/")  # opening any page sends what waits
    page.locator("#outbox-empty").wait_for(state="visible")
    page.locator("#fc-outbox").wait_for(state="hidden")
    assert Inspection.objects.count() == 1


def test_a_kept_reading_waits_for_the_crew_member_who_took_it(tablet, battery, supervisor, live_server, crew):
    """A shared tablet: a reading is stored under the name of whoever took it, never of the next user."""
    context, page = tablet
    sessions = {}
    for user in (supervisor, crew):  # signed in before the browser starts: SQLite would lock a write made later
        client = Client()
        client.force_login(user)
        sessions[user.username] = client.cookies["sessionid"].value

    def sign_in_as(user):
        context.clear_cookies()
        context.add_cookies([{"name": "sessionid", "value": sessions[user.username], "url": live_server.url}])

    page.goto(f"/readings/battery/{battery.pk}/inspect/")
    context.set_offline(True)
    _key_in_reading(page)
    page.locator("#fc-outbox").get_by_text("1 waiting to send").wait_for()

    sign_in_as(supervisor)  # in another tab, say: this page still thinks crew1 is signed in
    context.set_offline(False)
    page.wait_for_timeout(1500)  # time for the page to try sending, as it does when the connection returns
    assert Inspection.objects.count() == 0
    page.goto("/api/outbox/")
    page.get_by_text("Taken by crew1: it is sent when crew1 signs in on this tablet.").wait_for()
    assert Inspection.objects.count() == 0

    sign_in_as(crew)
    page.goto("/api/outbox/")
    page.locator("#outbox-empty").wait_for(state="visible")
    assert Inspection.objects.get().taken_by == crew


def test_offline_a_search_lists_the_kept_batteries_and_opens_their_entry_screen(tablet, battery, sealed_battery):
    context, page = tablet
    page.goto("/readings/find/")
    page.wait_for_function("() => document.documentElement.dataset.precached !== undefined")

    context.set_offline(True)
    page.goto("/readings/find/?q=FL-01&then=inspect")  # the search itself needs the server: the offline page answers
    page.get_by_role("heading", name="No connection").wait_for()
    page.get_by_role("link", name="TW-001 · in FL-01 · tw").wait_for()
    assert page.locator("#offline-battery-list a").count() == 1  # filtered by the truck number searched for
    page.get_by_role("link", name="TW-001 · in FL-01 · tw").click()
    page.get_by_role("heading", name="All-cell reading · TW-001").wait_for()

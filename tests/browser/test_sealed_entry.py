"""A sealed battery's reading screen in a real browser: "Just equalized" is not offered, and a kept page that
still sends it (an old tablet copy) is refused on the tablet, offline, before anything is queued."""
import pytest
from django.test import Client

from fleetcare.readings import validation
from fleetcare.readings.models import Inspection
from tests.browser.pages import outbox_count

pytestmark = pytest.mark.browser


def test_a_sealed_reading_offline_refuses_just_equalized_before_it_is_queued(tablet, live_server, crew, sealed_battery):
    client = Client()
    client.force_login(crew)
    tablet.context.add_cookies([{"name": "sessionid", "value": client.cookies["sessionid"].value,
                                 "url": live_server.url}])
    path = f"/readings/battery/{sealed_battery.pk}/inspect/"
    tablet.goto(path)
    tablet.wait_for_function("() => document.documentElement.dataset.precached !== undefined")
    offered = tablet.eval_on_selector_all("select[name=situation] option", "options => options.map(o => o.value)")
    assert "equalized" not in offered and "rested" in offered
    tablet.context.set_offline(True)
    tablet.goto(path)
    tablet.eval_on_selector("select[name=situation]", """select => {
        select.add(new Option("Just equalized", "equalized")); select.value = "equalized"; }""")
    tablet.fill("input[name=temp]", "21")
    tablet.fill("input[name=volts_1]", "12.71")
    tablet.fill("input[name=volts_2]", "12.69")
    tablet.click("#save-inspection")
    tablet.locator("#fc-check-refused").wait_for()
    assert validation.SEALED_NOT_EQUALIZED in tablet.inner_text("#inspection-form")
    assert outbox_count(tablet) == 0
    tablet.context.set_offline(False)
    assert not Inspection.objects.exists()

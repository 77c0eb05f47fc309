"""The Content-Security-Policy lets our own pages work in a real browser: charts draw, nothing is blocked."""
import pytest
from django.test import override_settings
from django.urls import reverse

from tests.browser.conftest import browser, tablet  # noqa: F401  (the shared Playwright fixtures)
from tests.browser.pages import sign_in

from .conftest import store_inspection, store_top_up

pytestmark = pytest.mark.browser


def violations_while(page, action):
    """Run action and return the CSP violations the browser reported (console and securitypolicyviolation)."""
    seen = []
    page.on("console", lambda msg: seen.append(msg.text) if "Content Security Policy" in msg.text else None)
    action()
    seen.extend(page.evaluate("window.__cspViolations || []"))
    return seen


def watch_violations(page):
    page.add_init_script(
        "window.__cspViolations = [];"
        "document.addEventListener('securitypolicyviolation', e => window.__cspViolations.push(e.violatedDirective + ' ' + e.blockedURI));"
    )


def draw_battery_record(page, battery):
    page.goto(reverse("fleet:battery", args=[battery.pk]))
    for chart in ("#chart-soc", "#chart-heatmap", "#chart-water"):
        page.locator(f"{chart} .main-svg").first.wait_for(state="attached")


def test_the_battery_record_draws_its_charts_under_the_policy(tablet, supervisor, battery, crew):  # noqa: F811
    store_inspection(battery, crew)
    store_top_up(battery, crew)
    watch_violations(tablet)
    sign_in(tablet, "super1")
    assert violations_while(tablet, lambda: draw_battery_record(tablet, battery)) == []


@override_settings(CONTENT_SECURITY_POLICY={"default-src": ["'self'"], "script-src": ["'self'"], "style-src": ["'self'"]})
def test_plotly_needs_inline_styles_which_is_why_the_policy_allows_them(tablet, supervisor, battery, crew):  # noqa: F811
    store_inspection(battery, crew)
    watch_violations(tablet)
    sign_in(tablet, "super1")

    def open_record():
        tablet.goto(reverse("fleet:battery", args=[battery.pk]))
        tablet.locator("#chart-soc .main-svg").first.wait_for(state="attached")
        tablet.wait_for_timeout(300)

    # a <style> element (style-src-elem): plotly adds those as it draws; our templates have none
    assert any(v.startswith("style-src-elem") for v in violations_while(tablet, open_record))


def test_a_supervisor_corrects_a_cell_in_the_browser(tablet, supervisor, battery, crew):  # noqa: F811
    inspection = store_inspection(battery, crew, sg="1.272")
    watch_violations(tablet)
    sign_in(tablet, "super1")

    def correct():
        tablet.goto(reverse("readings:inspection", args=[inspection.pk]))
        tablet.get_by_role("link", name="Correct this reading").click()
        tablet.fill("#id_reason", "Cell 9 typed as 1.272, hydrometer showed 1.232")
        tablet.fill("input[name=sg_9]", "1.232")
        tablet.locator("#save-inspection").click()
        tablet.get_by_text("Correction saved as a new version").wait_for()

    assert violations_while(tablet, correct) == []
    assert "History of this reading" in tablet.content()
    assert "Cell 9 typed as 1.272, hydrometer showed 1.232" in tablet.content()

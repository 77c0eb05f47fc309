"""Real-browser harness: Debian's chromium driven by Playwright (from pip) against pytest-django's live server.

Playwright never downloads a browser here: we launch the system chromium at CHROMIUM. Without it the
browser tests skip with the reason, except under CI=true, where a missing browser is a failure.
Screenshots land in test-artifacts/browser/ (git-ignored).
"""
import os

import pytest

from tests.browser.pages import ARTIFACTS, safe_name

# Playwright's sync API runs an event loop in this thread; the test's own ORM calls are still plain
# synchronous code, so Django's async-safety guard must be told so before either is used.
os.environ.setdefault("DJANGO_ALLOW_ASYNC_UNSAFE", "true")

CHROMIUM = os.environ.get("FLEETCARE_CHROMIUM", "/usr/bin/chromium")
CHROMIUM_ARGS = [
    "--no-sandbox", "--disable-gpu", "--disable-background-networking", "--disable-component-update",
    "--disable-sync", "--no-first-run",
]
TABLET = {"viewport": {"width": 1024, "height": 768}, "has_touch": True, "is_mobile": False, "device_scale_factor": 1}


def in_ci():
    return os.environ.get("CI", "").lower() in ("1", "true", "yes")


# Module scope, not session: Playwright's sync API allows one running instance per thread, and other
# test folders start their own; each module's browser is closed before the next module opens one.
@pytest.fixture(scope="module")
def browser():
    if not os.access(CHROMIUM, os.X_OK):
        reason = f"no chromium at {CHROMIUM}: install Debian's package (apt-get install chromium); Playwright must not download one"
        if in_ci():
            pytest.fail(f"CI=true and {reason}", pytrace=False)
        pytest.skip(reason)
    from playwright.sync_api import sync_playwright

    with sync_playwright() as playwright:
        browser = playwright.chromium.launch(executable_path=CHROMIUM, headless=True, args=CHROMIUM_ARGS)
        yield browser
        browser.close()


@pytest.fixture
def tablet(browser, live_server, request):
    """A fresh page on a 1024 x 768 landscape touch screen; a screenshot is kept whatever the outcome."""
    context = browser.new_context(base_url=live_server.url, accept_downloads=True, **TABLET)
    context.set_default_timeout(15_000)
    page = context.new_page()
    yield page
    ARTIFACTS.mkdir(parents=True, exist_ok=True)
    try:
        page.screenshot(path=str(ARTIFACTS / f"{safe_name(request.node.name)}-final.png"), full_page=True)
    finally:
        context.close()

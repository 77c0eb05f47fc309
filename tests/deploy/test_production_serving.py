"""The production build served by gunicorn with production settings: pages and static files answer 200, hardened."""
import re

import pytest

from tests.deploy.served import Browser, production_server

PAGES = ["/", "/batteries/", "/care/findings/", "/budget/", "/planner/", "/readings/find/", "/api/"]
SECURITY_HEADERS = {
    "Strict-Transport-Security": "max-age=31536000; includeSubDomains; preload",
    "X-Content-Type-Options": "nosniff",
    "X-Frame-Options": "DENY",
    "Referrer-Policy": "same-origin",
    "Cross-Origin-Opener-Policy": "same-origin",
}


@pytest.fixture(scope="module")
def served(tmp_path_factory):
    with production_server(tmp_path_factory.mktemp("served")) as base:
        yield base


def assert_hardened(headers):
    for name, value in SECURITY_HEADERS.items():
        assert headers[name] == value, name
    assert "default-src 'self'" in headers["Content-Security-Policy"]


def test_the_sign_in_page_answers_with_the_security_headers(served):
    status, headers, page = Browser(served).request("/accounts/login/")
    assert status == 200
    assert_hardened(headers)
    assert b"Sign in" in page


def test_plain_http_is_sent_to_https(served):
    status, headers, _ = Browser(served).request("/accounts/login/", headers={"X-Forwarded-Proto": "http"})
    assert status == 301
    assert headers["Location"].startswith("https://")


@pytest.mark.parametrize("path", PAGES)
def test_signed_in_pages_answer_200_hardened_and_private(served, path):
    browser = Browser(served)
    browser.sign_in("demo-admin")
    status, headers, _ = browser.request(path)
    assert status == 200, path
    assert_hardened(headers)
    assert "no-store" in headers["Cache-Control"] and "private" in headers["Cache-Control"]


def test_static_files_are_served_under_hashed_names_with_long_caching(served):
    browser = Browser(served)
    status, _, page = browser.request("/accounts/login/")
    stylesheets = re.findall(rb'href="(/static/[^"]+\.css)"', page)
    scripts = re.findall(rb'src="(/static/[^"]+\.js)"', page)
    assert stylesheets and scripts
    for url in stylesheets + scripts:
        assert re.search(rb"\.[0-9a-f]{12}\.(css|js)$", url), url
        status, headers, body = browser.request(url.decode())
        assert status == 200, url
        assert "immutable" in headers["Cache-Control"]
        assert headers["X-Content-Type-Options"] == "nosniff"
        assert body


def test_the_vendored_source_maps_named_by_the_files_are_served(served):
    browser = Browser(served)
    _, _, page = browser.request("/accounts/login/")
    bootstrap_css = re.search(rb'href="(/static/vendor/bootstrap/bootstrap\.min\.[0-9a-f]{12}\.css)"', page).group(1)
    _, _, css = browser.request(bootstrap_css.decode())
    map_name = re.search(rb"sourceMappingURL=(\S+?)\s*\*/", css).group(1).decode()
    status, _, body = browser.request("/static/vendor/bootstrap/" + map_name)
    assert status == 200
    assert body.startswith(b'{"version":3')

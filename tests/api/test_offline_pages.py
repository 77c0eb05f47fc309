"""What the tablet keeps for working offline: the service worker, the manifest and the list of pages."""
import json
from pathlib import Path

from django.contrib.staticfiles import finders

from fleetcare.fleet.models import Battery


def test_the_service_worker_is_served_from_the_root_for_the_whole_site(client):
    response = client.get("/sw.js")
    assert response.status_code == 200
    assert response["Content-Type"].startswith("application/javascript")
    assert response["Service-Worker-Allowed"] == "/"
    assert b'addEventListener("fetch"' in response.content


def test_the_manifest_starts_the_app_on_the_find_page_with_drawn_icons():
    manifest = json.loads(Path(finders.find("manifest.webmanifest")).read_text())
    assert manifest["start_url"] == "/readings/find/" and manifest["display"] == "standalone"
    for icon in manifest["icons"]:
        path = Path(finders.find(icon["src"].removeprefix("/static/")))
        assert path.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
        width = int.from_bytes(path.read_bytes()[16:20], "big")
        assert icon["sizes"] == f"{width}x{width}"


def test_the_page_list_holds_the_users_active_batteries_only(token_client, battery, sealed_battery, other_battery):
    retired = Battery.objects.create(serial="TW-OLD", profile=battery.profile, site=battery.site,
                                     in_service_date="2015-01-01", status=Battery.Status.RETIRED)
    body = token_client.get("/api/offline/pages").json()
    pages = body["pages"]
    assert "/readings/find/" in pages and "/api/batteries" in pages and "/api/offline/" in pages
    assert f"/readings/battery/{battery.pk}/inspect/" in pages
    assert f"/readings/battery/{battery.pk}/inspect/?scope=pilot" in pages
    assert f"/readings/battery/{sealed_battery.pk}/inspect/" in pages
    assert f"/readings/battery/{sealed_battery.pk}/inspect/?scope=pilot" not in pages  # blocks have no pilot cell
    assert f"/readings/battery/{other_battery.pk}/inspect/" not in pages
    assert f"/readings/battery/{retired.pk}/inspect/" not in pages
    assert "/static/js/offline.js" in body["assets"]


def test_every_page_links_the_manifest_and_the_offline_script(crew_client, battery):
    html = crew_client.get(f"/readings/battery/{battery.pk}/inspect/").content.decode()
    assert 'rel="manifest"' in html and "js/offline.js" in html
    assert f'data-offline-api="/api/batteries/{battery.pk}/inspections"' in html


def test_the_offline_and_documentation_pages_need_no_sign_in(client):
    assert client.get("/api/offline/").status_code == 200
    docs = client.get("/api/")
    assert docs.status_code == 200
    assert b"/api/batteries/{battery_id}/inspections" in docs.content


def test_the_outbox_page_needs_a_sign_in(crew_client):
    from django.test import Client

    assert Client().get("/api/outbox/").status_code == 302
    assert crew_client.get("/api/outbox/").status_code == 200

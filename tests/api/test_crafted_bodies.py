"""Crafted bodies get a 4xx answer and store nothing, never a 500."""
import json

from fleetcare.readings.models import Inspection, WaterTopUp


def test_a_body_that_is_not_utf8_is_refused(token_client, battery):
    for what in ("inspections", "top-ups"):
        response = token_client.post(f"/api/batteries/{battery.pk}/{what}", data=b'{"notes": "\xff\xfe\xc3"}',
                                     content_type="application/json")
        assert 400 <= response.status_code < 500
    assert Inspection.objects.count() == 0 and WaterTopUp.objects.count() == 0


def test_a_3_mb_json_body_is_refused(token_client, battery):
    body = json.dumps({"client_uuid": "7d0c75df-ee2c-598c-a699-05ec7275e038", "done_at": "2026-11-30T08:00",
                       "volume": "4.8", "notes": "x" * 3_000_000})
    response = token_client.post(f"/api/batteries/{battery.pk}/top-ups", data=body, content_type="application/json")
    assert response.status_code == 400
    assert response.json()["detail"] == "Nothing was saved: the request's body is larger than the 2.5 MB accepted."
    assert WaterTopUp.objects.count() == 0

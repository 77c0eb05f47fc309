"""GET /api/batteries/{id}/status: latest state of charge and spread, open findings, planned work."""
import datetime as dt
from decimal import Decimal

from django.utils import timezone

from fleetcare.readings.services import CellEntry, record_inspection, record_top_up


def _reading(battery, user, hours_ago, sgs, scope="all"):
    cells = [CellEntry(position=i, sg=Decimal(sg)) for i, sg in enumerate(sgs, start=1)]
    return record_inspection(battery=battery, user=user, taken_at=timezone.now() - dt.timedelta(hours=hours_ago),
                             situation="charged", cells=cells, scope=scope, temp_c=Decimal("25"))[0]


def test_it_reports_no_reading_yet(token_client, battery):
    body = token_client.get(f"/api/batteries/{battery.pk}/status").json()
    assert body["latest"] is None and body["latest_all_cells"] is None and body["last_top_up"] is None
    assert body["serial"] == "TW-001" and body["status"] == "in_service"


def test_it_reports_the_latest_soc_and_the_latest_all_cell_spread(token_client, crew, battery):
    _reading(battery, crew, 30, ["1.290"] * 23 + ["1.260"])
    pilot = _reading(battery, crew, 2, ["1.215"], scope="pilot")
    record_top_up(battery=battery, user=crew, done_at=timezone.now() - dt.timedelta(hours=1), volume_ml=Decimal("4800"))
    body = token_client.get(f"/api/batteries/{battery.pk}/status").json()
    assert body["latest"]["id"] == pilot.pk
    # SOC linear in SG between the profile's 1.140 and 1.290 (common practice): 1.215 is 50 %.
    assert body["latest"]["soc_percent"] == 50.0
    assert body["latest_all_cells"]["sg_spread"] == 0.03 and body["latest_all_cells"]["lowest_position"] == 24
    assert body["last_top_up"] is not None


def test_it_lists_active_findings_only(token_client, crew, battery):
    from fleetcare.care.models import Finding

    now = timezone.now()
    Finding.objects.create(battery=battery, kind="weak_cell", severity=3, positions=[24], opened_at=now,
                           last_seen_at=now, summary="Cell 24 reads 0.030 below the mean after charge.")
    Finding.objects.create(battery=battery, kind="high_spread", state="cleared", opened_at=now, last_seen_at=now,
                           cleared_at=now)
    body = token_client.get(f"/api/batteries/{battery.pk}/status").json()
    assert [(f["kind"], f["state"], f["positions"]) for f in body["open_findings"]] == [("weak_cell", "open", [24])]
    assert body["open_findings"][0]["title"] == "Weak cell"


def test_another_sites_battery_answers_404(token_client, other_battery):
    assert token_client.get(f"/api/batteries/{other_battery.pk}/status").status_code == 404


def test_it_reports_the_next_work_due(token_client, battery):
    body = token_client.get(f"/api/batteries/{battery.pk}/status").json()
    kinds = {item["kind"] for item in body["next_work_due"]}
    assert "all_cells" in kinds  # no all-cell reading on record: one is due

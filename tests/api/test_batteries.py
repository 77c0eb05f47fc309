"""GET /api/sites, /api/batteries and /api/profiles: only the user's sites."""
from django.db import connection
from django.test.utils import CaptureQueriesContext

from fleetcare.fleet.models import Battery


def test_it_lists_only_the_users_sites(token_client, site, care_site, other_site):
    sites = token_client.get("/api/sites").json()
    assert [s["code"] for s in sites] == ["tr", "tw"]  # by name: "Test residence", "Test warehouse"
    assert sites[1] == {"code": "tw", "name": "Test warehouse", "timezone": "Europe/London", "temp_unit": "C",
                        "volume_unit": "L"}


def test_it_lists_the_users_batteries_with_the_truck_they_are_in(token_client, battery, sealed_battery, other_battery):
    rows = token_client.get("/api/batteries").json()
    assert [r["serial"] for r in rows] == ["TR-P01", "TW-001"]
    tw = rows[1]
    assert tw["vehicle"] == "FL-01" and tw["site"] == "tw" and tw["positions"] == 24
    assert tw["inspect_url"] == f"/readings/battery/{battery.pk}/inspect/"
    assert rows[0]["vehicle"] is None and rows[0]["reads_by_block"] is True and rows[0]["positions"] == 2


def test_it_filters_by_site_code(token_client, battery, sealed_battery):
    assert [r["serial"] for r in token_client.get("/api/batteries?site=tr").json()] == ["TR-P01"]
    assert token_client.get("/api/batteries?site=other").json() == []


def test_it_leaves_retired_batteries_out_unless_asked(token_client, battery, sealed_battery):
    Battery.objects.filter(pk=sealed_battery.pk).update(status=Battery.Status.RETIRED)
    assert [r["serial"] for r in token_client.get("/api/batteries").json()] == ["TW-001"]
    rows = token_client.get("/api/batteries?include_retired=true").json()
    assert [(r["serial"], r["status"]) for r in rows] == [("TR-P01", "retired"), ("TW-001", "in_service")]


def test_the_battery_list_takes_the_same_queries_for_more_batteries(token_client, battery, traction_profile, site):
    def count():
        with CaptureQueriesContext(connection) as queries:
            assert token_client.get("/api/batteries").status_code == 200
        return len(queries)

    count()  # the first use of a token also records when it was used
    few = count()
    for n in range(2, 8):
        Battery.objects.create(serial=f"TW-00{n}", profile=traction_profile, site=site, in_service_date="2025-01-01")
    assert count() == few


def test_it_lists_the_profiles_in_use_at_the_users_sites(token_client, battery, sealed_battery, other_site):
    from fleetcare.fleet.models import BatteryProfile

    BatteryProfile.objects.create(name="Unused 80 V", nominal_voltage=80, cells_per_block=40, capacity_ah=930,
                                  full_charge_sg="1.290", discharged_sg="1.140")
    rows = token_client.get("/api/profiles").json()
    assert [p["name"] for p in rows] == ["24 V AGM pair", "48 V 24-cell 775 Ah"]
    assert rows[1]["full_charge_sg"] == 1.29 and rows[1]["cell_count"] == 24
    assert rows[0]["positions"] == 2 and rows[0]["watering_allowed"] is False

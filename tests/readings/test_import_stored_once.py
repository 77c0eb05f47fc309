"""Already stored means already stored: whatever stored a reading, importing it again adds nothing."""
import datetime as dt
import threading
from decimal import Decimal

import pytest
from django.contrib.auth import get_user_model
from django.db import connection
from django.urls import reverse
from django.utils import timezone

from fleetcare.fleet.access import visible_batteries
from fleetcare.demo import fleet as demo
from fleetcare.fleet.models import Battery
from fleetcare.readings.csv_io import import_readings
from fleetcare.readings import services
from fleetcare.readings.models import CellReading, Inspection
from fleetcare.readings.services import CellEntry, record_inspection

HEADER = "serial,taken_at,situation,cell,sg,temp,volts,level\n"


def test_every_demo_batterys_export_imported_back_adds_nothing(client, db):
    """Every demo battery, among them flooded trays, the trays at the °F site (America/Chicago) and the sealed chair
    pairs, exported and imported again: the dry run finds every reading already stored, the import adds nothing."""
    demo.load()
    admin = get_user_model().objects.get(username="demo-admin")
    client.force_login(admin)
    batteries = list(Battery.objects.select_related("profile", "site").order_by("serial"))
    kinds = {(b.profile.is_flooded, b.site.temp_unit) for b in batteries}
    assert {(True, "C"), (True, "F"), (False, "C")} <= kinds  # the three kinds the round trip must hold for
    cells = CellReading.objects.count()
    exported_readings = 0
    for battery in batteries:
        stored = Inspection.objects.current().filter(battery=battery).count()
        exported = client.get(reverse("readings:export_csv", args=[battery.pk])).content.decode()
        check = import_readings(exported, user=admin, batteries=visible_batteries(admin), dry_run=True)
        assert check.errors == [], battery.serial
        assert (check.inspections_created, check.inspections_already_stored) == (0, stored), battery.serial
        report = import_readings(exported, user=admin, batteries=visible_batteries(admin))
        assert report.imported and report.inspections_created == 0, battery.serial
        assert report.inspections_already_stored == stored, battery.serial
        exported_readings += stored
    assert CellReading.objects.count() == cells
    assert exported_readings == Inspection.objects.current().count() > 1000


def test_a_serial_the_export_neutralised_against_formulas_imports_back_as_its_battery(crew_client, crew, battery):
    """The export puts a quote before a serial a spreadsheet would run as a formula (OWASP, CSV injection)."""
    Battery.objects.filter(pk=battery.pk).update(serial="-TW-001")
    battery.refresh_from_db()
    cells = [CellEntry(position=p, sg=Decimal("1.280")) for p in range(1, battery.profile.positions + 1)]
    first, _ = record_inspection(battery=battery, user=crew, taken_at=timezone.now() - dt.timedelta(hours=2),
                                 situation="charged", cells=cells, temp_c=Decimal("25.0"))
    exported = crew_client.get(reverse("readings:export_csv", args=[battery.pk])).content.decode()
    assert exported.splitlines()[1].startswith("'-TW-001,")
    check = import_readings(exported, user=crew, batteries=visible_batteries(crew), dry_run=True)
    assert check.errors == [] and (check.inspections_created, check.inspections_already_stored) == (0, 1)
    services.remove_inspection(first, user=crew, reason="taken against the wrong battery")
    report = import_readings(exported, user=crew, batteries=visible_batteries(crew))
    assert report.imported and report.inspections_created == 1
    assert Inspection.objects.current().get().battery == battery
    unknown = import_readings(exported.replace("'-TW-001,", "'-TW-009,"), user=crew, batteries=visible_batteries(crew))
    assert unknown.errors[0] == (2, "no battery with serial “'-TW-009” at your sites.")


def test_a_reading_stored_by_the_tablet_is_recognised_by_its_battery_minute_and_situation(crew_client, battery, crew):
    form = {"situation": "charged", "scope": "all", "taken_at": "2026-11-02T06:00", "temp": "25",
            "client_uuid": "0b0e9f44-61c4-4d5f-9d0e-3c1c1cf2f0a1",
            **{f"sg_{n}": "280" for n in range(1, 25)}}
    crew_client.post(reverse("readings:inspect", args=[battery.pk]), form)
    assert Inspection.objects.count() == 1
    rows = "".join(f"TW-001,2026-11-02T06:00:30,charged,{n},1.281,25,,ok\n" for n in range(1, 25))
    rows += "".join(f"TW-001,2026-11-02T06:00,before_charge,{n},1.200,25,,ok\n" for n in range(1, 25))
    report = import_readings(HEADER + rows, user=crew, batteries=Battery.objects.all())
    assert (report.inspections_created, report.inspections_already_stored) == (1, 1)
    assert [note.message for note in report.already] == ["TW-001 at 2 Nov 2026 06:00 (just charged) is already stored."]
    assert Inspection.objects.count() == 2


@pytest.mark.django_db(transaction=True)
def test_two_imports_of_one_file_at_the_same_moment_store_it_once(battery, crew):
    """Two real connections import the same file at once: one stores it, the other finds it stored."""
    if connection.vendor != "postgresql":
        pytest.skip("SQLite lets one connection write at a time; this is PostgreSQL's case")
    text = HEADER + "".join(
        f"TW-001,2026-11-{day:02d}T06:00,charged,{n},1.280,25,,ok\n" for day in range(1, 21) for n in range(1, 25)
    )
    start = threading.Barrier(2)
    reports, failures = [], []

    def run():
        try:
            start.wait()
            reports.append(import_readings(text, user=crew, batteries=Battery.objects.all(), rows_per_chunk=48))
        except Exception as exc:  # noqa: BLE001 - the test reports it below
            failures.append(exc)
        finally:
            connection.close()

    threads = [threading.Thread(target=run) for _ in range(2)]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join(timeout=120)
    assert failures == []
    assert sorted((r.inspections_created, r.inspections_already_stored) for r in reports) == [(0, 20), (20, 0)]
    assert all(r.ok and r.imported for r in reports)
    assert Inspection.objects.count() == 20 and CellReading.objects.count() == 480

"""On PostgreSQL the import's COPY statements run on a thread of their own, in the import's transaction, while the
next chunk is checked: what it stores is what the plain path stores, and its failure stores nothing."""
import contextlib
import threading

import pytest
from django.db import connection, transaction
from django.forms.models import model_to_dict

from fleetcare.fleet.models import Battery
from fleetcare.readings import csv_io
from fleetcare.readings.models import BatteryState, CellReading, Inspection

HEADER = "serial,taken_at,situation,cell,sg,temp,volts,level\n"


@pytest.fixture(autouse=True)
def postgresql_only(db):
    if connection.vendor != "postgresql":
        pytest.skip("the copying thread runs PostgreSQL's COPY; elsewhere the import writes with bulk_create")


def a_file(days=6):
    """A few days of readings, each its own chunk with one reading per chunk (rows_per_chunk=24 below)."""
    return HEADER + "".join(
        f"TW-001,2026-11-{day:02d}T{hour:02d}:00,{situation},{n},{1.250 + (day * n) % 9 / 1000:.3f},{20 + day},,ok\n"
        for day in range(1, days + 1) for hour, situation in ((6, "charged"), (14, "before_charge")) for n in range(1, 25)
    )


@pytest.fixture
def copies(monkeypatch):
    """The threads each COPY ran on, in order."""
    threads, send = [], csv_io._send

    def recorded(cursor, sql, text):
        threads.append(threading.current_thread().name)
        return send(cursor, sql, text)

    monkeypatch.setattr(csv_io, "_send", recorded)
    return threads


def stored():
    """Every stored reading, cell and kept state as plain values, without ids and the moment of storing."""
    inspections = [
        (model_to_dict(i, exclude=["id", "recorded_at"]), [model_to_dict(c, exclude=["id", "inspection"]) for c in
                                                            i.cells.order_by("position")])
        for i in Inspection.objects.order_by("taken_at", "situation")
    ]
    by_time = dict(Inspection.objects.values_list("id", "taken_at"))
    states = [
        {name: by_time.get(value, value) if name.endswith("_inspection") else value
         for name, value in model_to_dict(state, exclude=["id"]).items()}
        for state in BatteryState.objects.order_by("battery_id")
    ]
    return inspections, states


def import_and_look(crew, **kwargs):
    """Import the file in a savepoint, note what it stored, and roll it back."""
    with transaction.atomic():
        report = csv_io.import_readings(a_file(), user=crew, batteries=Battery.objects.all(), rows_per_chunk=24, **kwargs)
        found = stored()
        transaction.set_rollback(True)
    return report, found


def test_the_copying_thread_stores_exactly_what_the_plain_path_stores(battery, crew, copies, monkeypatch):
    threaded, threaded_rows = import_and_look(crew)
    assert threaded.imported and threaded.inspections_created == 12 and threaded.cells_created == 288
    assert len(copies) == 24 and all(name.startswith("csv-import-copy") for name in copies)
    copies.clear()
    monkeypatch.setattr(csv_io._Copier, "running", contextlib.nullcontext)
    plain, plain_rows = import_and_look(crew)
    assert copies == [threading.current_thread().name] * 24
    assert plain.as_dict() == threaded.as_dict()
    assert plain_rows == threaded_rows
    assert len(threaded_rows[0]) == 12 and threaded_rows[1][0]["charge_count"] == 6


def test_a_copy_that_fails_on_the_copying_thread_stores_nothing(battery, crew, monkeypatch):
    """The third chunk's cells are refused by PostgreSQL on the copying thread: the import raises that error and
    the chunks already stored are rolled back with the rest."""
    send, calls = csv_io._send, []

    def refuse_the_third_chunks_cells(cursor, sql, text):
        calls.append(sql)
        if len(calls) == 6:
            text = "not a cell row\n"
        return send(cursor, sql, text)

    monkeypatch.setattr(csv_io, "_send", refuse_the_third_chunks_cells)
    with pytest.raises(Exception, match="invalid input syntax"):
        csv_io.import_readings(a_file(), user=crew, batteries=Battery.objects.all(), rows_per_chunk=24)
    assert "readings_cellreading" in calls[5]
    assert Inspection.objects.count() == 0 and CellReading.objects.count() == 0
    assert not BatteryState.objects.filter(battery=battery).exclude(charge_count=0).exists()

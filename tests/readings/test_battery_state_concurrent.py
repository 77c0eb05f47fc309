"""Two writers of one battery at once: the second waits for the first and keeps its change (PostgreSQL)."""
import datetime as dt
import threading
from decimal import Decimal

import pytest
from django.db import connection, connections, transaction

from fleetcare.readings import services, state
from fleetcare.readings.models import BatteryState

pytestmark = pytest.mark.skipif(connection.vendor != "postgresql", reason="row locks need PostgreSQL (SQLite locks the whole file)")

START = dt.datetime(2026, 10, 1, 6, 0, tzinfo=dt.UTC)


def read(battery, user, hours):
    return services.record_inspection(
        battery=battery, user=user, taken_at=START + dt.timedelta(hours=hours), situation="charged",
        cells=[services.CellEntry(position=p, sg=Decimal("1.280")) for p in range(1, 25)], temp_c=Decimal("25"),
    )[0]


def test_a_removal_during_a_new_reading_keeps_the_new_reading_in_the_state(transactional_db, battery, supervisor):
    older = read(battery, supervisor, 0)
    read(battery, supervisor, 1)
    reading_stored, release = threading.Event(), threading.Event()
    newest = {}

    def new_reading():
        try:
            with transaction.atomic():
                newest["inspection"] = read(battery, supervisor, 48)
                reading_stored.set()
                release.wait(10)  # hold the battery's lock, uncommitted
        finally:
            connections.close_all()

    def removal():
        reading_stored.wait(10)
        try:
            services.remove_inspection(older, user=supervisor, reason="wrong battery")
        finally:
            connections.close_all()

    threads = [threading.Thread(target=new_reading), threading.Thread(target=removal)]
    for t in threads:
        t.start()
    reading_stored.wait(10)
    threading.Event().wait(0.5)  # let the removal reach the lock and wait on it
    release.set()
    for t in threads:
        t.join(20)
    kept = BatteryState.objects.get(battery=battery)
    assert kept.latest_inspection_id == newest["inspection"].pk
    assert kept.charge_count == 2
    assert state.differences([battery.pk]) == {}

"""Two supervisors correcting the same reading at once: one new revision, one clear refusal (PostgreSQL)."""
import threading
from decimal import Decimal

import pytest
from django.db import connection, connections, transaction

from fleetcare.readings.models import ReadingChange
from fleetcare.readings import services
from fleetcare.readings.models import Inspection
from fleetcare.readings.services import CellEntry

from .conftest import store_inspection

pytestmark = pytest.mark.skipif(connection.vendor != "postgresql", reason="row locks need PostgreSQL (SQLite locks the whole file)")


def correct(old, user, sg, reason):
    cells = [CellEntry(position=p, sg=Decimal(sg)) for p in range(1, 25)]
    return services.correct_inspection(old, user=user, reason=reason, cells=cells, temp_c=Decimal("25"),
                                       taken_at=old.taken_at, situation="charged")


def test_the_second_of_two_simultaneous_corrections_is_refused(transactional_db, battery, crew, supervisor):
    old = store_inspection(battery, crew)
    first_holds_lock, release_first = threading.Event(), threading.Event()
    outcome = {}

    def first():
        try:
            with transaction.atomic():
                correct(Inspection.objects.get(pk=old.pk), supervisor, "1.250", "first supervisor")
                first_holds_lock.set()
                release_first.wait(10)
            outcome["first"] = "saved"
        finally:
            connections.close_all()

    def second():
        first_holds_lock.wait(10)
        try:
            correct(Inspection.objects.get(pk=old.pk), supervisor, "1.260", "second supervisor")
            outcome["second"] = "saved"
        except services.RevisionError as exc:
            outcome["second"] = str(exc)
        finally:
            connections.close_all()

    threads = [threading.Thread(target=first), threading.Thread(target=second)]
    for t in threads:
        t.start()
    first_holds_lock.wait(10)
    threading.Event().wait(0.5)  # let the second reach its UPDATE and wait on the row lock
    release_first.set()
    for t in threads:
        t.join(20)
    assert outcome == {
        "first": "saved",
        "second": "This version was already corrected. Open the current version and correct that one instead.",
    }
    assert Inspection.objects.count() == 2
    assert Inspection.objects.current().get().revision_reason == "first supervisor"
    assert ReadingChange.objects.count() == 1

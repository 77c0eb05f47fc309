"""The upload page stores the file and a background task imports it; the import's page follows it."""
import datetime as dt
import io
import os
import subprocess
import sys
from pathlib import Path

import pytest
from django.conf import settings
from django.db import connection
from django.urls import reverse
from django.utils import timezone

from fleetcare.care.models import Finding
from fleetcare.readings import csv_io
from fleetcare.readings.models import CsvImport, Inspection
from tests.care.helpers import water

HEADER = "serial,taken_at,situation,cell,sg,temp,volts,level\n"


def rows(taken="2026-11-02T06:00", sg="1.280", cells=24, low=None):
    return "".join(f"TW-001,{taken},charged,{n},{low if n == 9 and low else sg},25,,ok\n" for n in range(1, cells + 1))


def upload(client, text, **options):
    file = io.BytesIO(text.encode())
    file.name = "readings.csv"
    return client.post(reverse("readings:import"), {"file": file, **options})


def test_an_upload_is_imported_by_a_task_and_its_page_keeps_the_result(crew_client, battery):
    response = upload(crew_client, HEADER + rows())
    job = CsvImport.objects.get()
    assert response.status_code == 302 and response["Location"] == reverse("readings:import_result", args=[job.pk])
    assert job.state == CsvImport.State.DONE and job.task_id
    assert Inspection.objects.count() == 1
    page = crew_client.get(response["Location"]).content.decode()
    assert "Stored 1 reading (24 cell readings) from 24 rows; 0 already stored" in page
    assert not job.file  # the upload is read once, then forgotten
    progress = crew_client.get(reverse("readings:import_progress", args=[job.pk])).json()
    assert progress["finished"] and progress["rows_checked"] == 24 and progress["inspections"] == 1


def test_a_dry_run_upload_says_what_is_new_and_what_is_already_stored(crew_client, battery):
    upload(crew_client, HEADER + rows())
    response = upload(crew_client, HEADER + rows() + rows(taken="2026-11-03T06:00"), dry_run="1")
    page = crew_client.get(response["Location"]).content.decode()
    assert "2 rows" not in page
    assert "48 rows; 1 new reading (24 cell readings) would be stored; 1 already stored. Nothing was stored." in page
    assert "TW-001 at 2 Nov 2026 06:00 (just charged) is already stored." in page
    assert Inspection.objects.count() == 1


def test_a_bad_file_lists_the_first_thousand_problems_and_offers_all_of_them(crew_client, battery):
    bad = "".join(f"TW-001,2026-11-{1 + n // 1000:02d}T06:{n % 60:02d},charged,1,abc,25,,ok\n" for n in range(1_200))
    response = upload(crew_client, HEADER + bad)
    page = crew_client.get(response["Location"]).content.decode()
    assert "Nothing was imported: 1200 problems" in page
    assert "the first 1000 of 1200" in page
    assert "By column: sg 1200." in page
    job = CsvImport.objects.get()
    notes = b"".join(crew_client.get(reverse("readings:import_notes", args=[job.pk])).streaming_content).decode()
    assert notes.splitlines()[0] == "line,cell,column,kind,message"
    assert len(notes.splitlines()) == 1 + 1200
    assert Inspection.objects.count() == 0


def test_a_file_over_the_size_limit_is_refused_with_its_size(crew_client, battery, settings):
    settings.FLEETCARE_IMPORT_MAX_MB = 0
    response = upload(crew_client, HEADER + rows())
    assert "the largest accepted is 0 MB" in response.content.decode()
    assert not CsvImport.objects.exists()


def test_a_failed_import_shows_its_error_and_stores_nothing(crew_client, battery, monkeypatch):
    """A fault after the first chunk is written (here the second chunk's write fails) rolls the first back too."""
    real_store = csv_io.store_readings
    calls = []

    def store_then_fail(readings, user, folding=None):
        calls.append(len(readings))
        if len(calls) == 2:
            raise OSError("disk full")
        return real_store(readings, user, folding)

    monkeypatch.setattr(csv_io, "store_readings", store_then_fail)
    monkeypatch.setattr(csv_io, "CHUNK_ROWS", 24)
    response = upload(crew_client, HEADER + rows() + rows(taken="2026-11-03T06:00"))
    job = CsvImport.objects.get()
    assert calls == [1, 1]
    assert job.state == CsvImport.State.FAILED
    page = crew_client.get(response["Location"]).content.decode()
    assert "The import stopped with an error, and nothing from this file was stored: OSError: disk full" in page
    assert Inspection.objects.count() == 0


def test_another_sites_import_is_not_found(client, crew, other_site, django_user_model):
    stranger = django_user_model.objects.create_user(username="stranger")
    other_site.members.add(stranger)
    job = CsvImport.objects.create(uploaded_by=stranger, file_name="theirs.csv")
    client.force_login(crew)
    assert client.get(reverse("readings:import_result", args=[job.pk])).status_code == 404
    assert client.get(reverse("readings:import_progress", args=[job.pk])).status_code == 404


def _database_url():
    """The test database as a DATABASE_URL, for a worker process of its own."""
    db = connection.settings_dict
    if connection.vendor == "sqlite":
        return f"sqlite:///{db['NAME']}"
    return f"postgres://{db['USER']}:{db['PASSWORD'] or ''}@{db['HOST'] or '127.0.0.1'}:{db['PORT'] or 5432}/{db['NAME']}"


@pytest.mark.django_db(transaction=True)
def test_the_real_worker_process_imports_an_upload_and_then_checks_its_findings(client, crew, battery, settings):
    """Through `manage.py db_worker` in a process of its own, on this test's database (SQLite file or PostgreSQL)."""
    settings.TASKS = {"default": {"BACKEND": "django_tasks_db.DatabaseBackend", "QUEUES": ["default"]}}
    client.force_login(crew)
    water(battery, crew, timezone.now() - dt.timedelta(days=2), 1200)  # keeps the watering rules quiet
    taken = timezone.localtime(timezone.now() - dt.timedelta(hours=2), battery.site.tzinfo).strftime("%Y-%m-%dT%H:%M")
    response = upload(client, HEADER + rows(taken=taken, sg="1.285", low="1.245"))
    job = CsvImport.objects.get()
    assert job.state == CsvImport.State.WAITING  # queued: nothing runs in the web process
    page = client.get(response["Location"]).content.decode()
    assert "Waiting for the background worker" in page and "js/import.js" in page
    env = {**os.environ, "DATABASE_URL": _database_url(), "FLEETCARE_MEDIA_ROOT": str(settings.MEDIA_ROOT)}
    worker = subprocess.run(
        [sys.executable, str(Path(settings.BASE_DIR) / "manage.py"), "db_worker", "--batch", "--no-reload",
         "--no-startup-delay", "--interval", "0"],
        env=env, capture_output=True, text=True, timeout=300,
    )
    assert worker.returncode == 0, worker.stderr
    job.refresh_from_db()
    assert job.state == CsvImport.State.DONE, job.error
    assert job.result["inspections_created"] == 1
    assert Inspection.objects.get().cells.count() == 24
    # the findings pass the import queued ran in the same worker, after the import committed
    assert Finding.objects.get(battery=battery, kind="weak_cell").positions == [9]
    assert "Stored 1 reading" in client.get(response["Location"]).content.decode()

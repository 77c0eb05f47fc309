"""An upload's page follows the background worker by itself (static/js/import.js) until the result shows."""
import os
import re
import subprocess
import sys
from pathlib import Path

import pytest
from django.conf import settings as django_settings

from fleetcare.readings.models import CsvImport, Inspection
from tests.browser.pages import screenshot, sign_in
from tests.readings.test_background_import import _database_url

pytestmark = pytest.mark.django_db(transaction=True)


def test_the_import_page_shows_progress_then_the_result_without_a_reload(tablet, crew, battery, settings, tmp_path):
    settings.TASKS = {"default": {"BACKEND": "django_tasks_db.DatabaseBackend", "QUEUES": ["default"]}}
    rows = "".join(f"TW-001,2026-10-{1 + i // 24:02d}T{i % 24:02d}:00,charged,{n},1.280,25,,ok\n"
                   for i in range(240) for n in range(1, 25))
    upload = tmp_path / "october.csv"
    upload.write_text("serial,taken_at,situation,cell,sg,temp,volts,level\n" + rows)
    sign_in(tablet, crew.username)
    tablet.goto("/readings/import/")
    tablet.set_input_files("#file", str(upload))
    tablet.get_by_role("button", name="Import").click()
    tablet.wait_for_url(re.compile(r"/readings/import/[0-9a-f-]+/$"))
    assert "Waiting for the background worker" in tablet.inner_text("#import-state")
    env = {**os.environ, "DATABASE_URL": _database_url(), "FLEETCARE_MEDIA_ROOT": str(django_settings.MEDIA_ROOT),
           "FLEETCARE_IMPORT_CHUNK_ROWS": "480"}
    worker = subprocess.Popen(
        [sys.executable, str(Path(django_settings.BASE_DIR) / "manage.py"), "db_worker", "--no-reload",
         "--no-startup-delay", "--interval", "0.2"], env=env, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    try:
        tablet.wait_for_selector("#import-summary", timeout=180_000)  # the page reloads itself when the worker is done
    finally:
        worker.terminate()
        worker.wait(timeout=30)
    screenshot(tablet, "import-finished")
    assert "Stored 240 readings (5760 cell readings) from 5760 rows" in tablet.inner_text("#import-summary")
    assert CsvImport.objects.get().state == CsvImport.State.DONE
    assert Inspection.objects.count() == 240

"""The CSV import as a background task: the page stores the upload, the worker imports it.

Progress goes to a small JSON file beside the upload (the import's own transaction holds its rows until
the end, and on SQLite no other connection may write meanwhile); the result is saved on the CsvImport
row in the same transaction as the readings, so a finished import shows exactly what was stored.
"""
import io
import json
import logging
import os
from pathlib import Path

from django.conf import settings
from django.core.files.storage import default_storage
from django.db import transaction
from django.utils import timezone
from django_tasks import task

from fleetcare.fleet.access import visible_batteries
from fleetcare.readings import csv_io
from fleetcare.readings.models import CsvImport

log = logging.getLogger(__name__)


@task()
def import_csv(import_id: str) -> str:
    """Import an uploaded file (see run_import); returns the import's state."""
    return run_import(import_id)


def queue_csv_import(upload, *, user, dry_run=False, good_rows_only=False):
    """Keep an uploaded CSV file and queue its import for the background worker. Returns the CsvImport."""
    job = CsvImport(uploaded_by=user, file_name=upload.name[:200], size_bytes=upload.size, dry_run=dry_run,
                    good_rows_only=good_rows_only)
    job.file.save(f"{job.pk}.csv", upload, save=False)
    job.save()
    queued = import_csv.enqueue(str(job.pk))
    CsvImport.objects.filter(pk=job.pk).update(task_id=str(queued.id))
    return job


def progress_path(job):
    return Path(settings.MEDIA_ROOT) / "imports" / f"{job.pk}.progress.json"


def read_progress(job):
    """What the worker last wrote about this import: rows checked, inspections stored, problems so far."""
    try:
        return json.loads(progress_path(job).read_text())
    except (OSError, ValueError):
        return {}


def _write_progress(job, report, bytes_read):
    path = progress_path(job)
    path.parent.mkdir(parents=True, exist_ok=True)
    part = path.with_suffix(".part")
    part.write_text(json.dumps({
        "rows_checked": report.rows_read, "inspections": report.inspections_created,
        "already_stored": report.inspections_already_stored, "problems": report.problem_count,
        "checks": report.check_count, "percent": min(100, round(100 * bytes_read / job.size_bytes)) if job.size_bytes else 0,
    }))
    os.replace(part, path)  # the page never reads a half-written file


def run_import(import_id):
    """Import one uploaded file, all or nothing; the task's body, also run directly by tests."""
    job = CsvImport.objects.select_related("uploaded_by").get(pk=import_id)
    if job.finished:
        return job.state
    CsvImport.objects.filter(pk=job.pk).update(state=CsvImport.State.RUNNING)
    notes_name = f"imports/{job.pk}-notes.csv"
    notes_path = Path(settings.MEDIA_ROOT) / notes_name
    notes_path.parent.mkdir(parents=True, exist_ok=True)
    try:
        with default_storage.open(job.file.name, "rb") as raw, open(notes_path, "w", encoding="utf-8", newline="") as notes:
            text = io.TextIOWrapper(raw, encoding="utf-8-sig", newline="")
            with transaction.atomic():
                report = csv_io.import_readings(
                    text, user=job.uploaded_by, batteries=visible_batteries(job.uploaded_by),
                    good_rows_only=job.good_rows_only, dry_run=job.dry_run, notes_out=notes,
                    progress=lambda report: _write_progress(job, report, raw.tell()),
                )
                _write_progress(job, report, job.size_bytes)
                job.result = report.as_dict()
                job.notes_file.name = notes_name
                job.state = CsvImport.State.DONE
                job.finished_at = timezone.now()
                job.save(update_fields=["result", "notes_file", "state", "finished_at"])
    except Exception as exc:
        log.exception("CSV import %s failed", job.pk)
        CsvImport.objects.filter(pk=job.pk).update(
            state=CsvImport.State.FAILED, finished_at=timezone.now(),
            error=f"{type(exc).__name__}: {exc}"[:2000],
        )
        raise
    finally:
        _forget_upload(job)
    return CsvImport.State.DONE


def _forget_upload(job):
    """The upload is read once; what it did is kept on the import's row and in its notes file."""
    if job.file.name:
        default_storage.delete(job.file.name)
        CsvImport.objects.filter(pk=job.pk).update(file="")

from django.contrib.auth import get_user_model
from django.core.management.base import BaseCommand, CommandError

from fleetcare import words
from fleetcare.fleet.access import visible_batteries
from fleetcare.readings.csv_io import COLUMNS, OPTIONAL_COLUMNS, import_readings


class Command(BaseCommand):
    help = (f"Import cell readings from CSV ({','.join(COLUMNS)}; optional {','.join(OPTIONAL_COLUMNS)}). "
            "All rows or none; the file is read in chunks, in this process (the web page uses the background worker).")

    def add_arguments(self, parser):
        parser.add_argument("file")
        parser.add_argument("--dry-run", action="store_true", help="Check every row; store nothing.")
        parser.add_argument("--good-rows-only", action="store_true", help="Import the good readings even if some rows are bad.")
        parser.add_argument("--user", default=None, help="Username recorded as the reader (default: the first superuser).")
        parser.add_argument("--notes", default=None, help="Write every note (problems, values to check, already stored) to this CSV file.")

    def handle(self, *args, file, dry_run, good_rows_only, user, notes, **options):
        User = get_user_model()
        reader = User.objects.filter(username=user).first() if user else User.objects.filter(is_superuser=True).order_by("pk").first()
        if reader is None:
            raise CommandError("No such user to record as the reader; pass --user USERNAME.")
        try:
            handle = open(file, encoding="utf-8-sig", newline="")
        except OSError as exc:
            raise CommandError(f"Cannot read {file}: {exc}") from exc
        notes_out = open(notes, "w", encoding="utf-8", newline="") if notes else None
        try:
            with handle:
                report = import_readings(handle, user=reader, batteries=visible_batteries(reader),
                                         good_rows_only=good_rows_only, dry_run=dry_run, notes_out=notes_out)
        finally:
            if notes_out is not None:
                notes_out.close()
        for line, message in report.errors:
            self.stderr.write(f"line {line}: {message}")
        if report.problem_count > len(report.problems):
            self.stderr.write(f"… {words.count(report.problem_count - len(report.problems), 'more problem', 'more problems')}"
                              f"{' in ' + notes if notes else ' (pass --notes FILE for all of them)'}.")
        for note in report.checks:
            self.stdout.write(f"line {note.line}: {note.message}")
        for unit in report.unit_summary():
            self.stdout.write(f"Temperatures read as {unit}.")
        if report.problem_count and not report.imported:
            if dry_run and good_rows_only:
                self.stdout.write(f"Check: {words.count(report.inspections_created, 'good reading')} would be stored.")
            raise CommandError(f"Nothing imported: {words.count(report.problem_count, 'problem')}. Fix them, or pass --good-rows-only.")
        if dry_run:
            self.stdout.write(f"Check passed: {words.count(report.rows_read, 'row')}, {words.count(report.inspections_created, 'new reading')}, "
                              f"{report.inspections_already_stored} already stored. Nothing stored.")
            return
        self.stdout.write(self.style.SUCCESS(
            f"Stored {words.count(report.inspections_created, 'inspection')}, {words.count(report.cells_created, 'cell reading')}; "
            f"{report.inspections_already_stored} already stored."
        ))

from django.contrib.auth import get_user_model
from django.core.management.base import BaseCommand, CommandError

from fleetcare.fleet.access import visible_batteries
from fleetcare.readings.csv_io import import_readings


class Command(BaseCommand):
    help = "Import cell readings from CSV (serial,taken_at,situation,cell,sg,temp,volts,level). All rows or none."

    def add_arguments(self, parser):
        parser.add_argument("file")
        parser.add_argument("--dry-run", action="store_true", help="Check every row; store nothing.")
        parser.add_argument("--good-rows-only", action="store_true", help="Import the good inspections even if some rows are bad.")
        parser.add_argument("--user", default=None, help="Username recorded as the reader (default: the first superuser).")

    def handle(self, *args, file, dry_run, good_rows_only, user, **options):
        User = get_user_model()
        reader = User.objects.filter(username=user).first() if user else User.objects.filter(is_superuser=True).order_by("pk").first()
        if reader is None:
            raise CommandError("No such user to record as the reader; pass --user USERNAME.")
        try:
            with open(file, encoding="utf-8-sig", newline="") as handle:
                text = handle.read()
        except (OSError, UnicodeDecodeError) as exc:
            raise CommandError(f"Cannot read {file}: {exc}") from exc
        report = import_readings(text, user=reader, batteries=visible_batteries(reader),
                                 good_rows_only=good_rows_only, dry_run=dry_run)
        for line, message in report.errors:
            self.stderr.write(f"line {line}: {message}")
        if report.errors and not report.imported:
            if dry_run and good_rows_only:
                self.stdout.write(f"Check: {report.inspections_created} good inspection(s) would be stored.")
            raise CommandError(f"Nothing imported: {len(report.errors)} problem(s). Fix them, or pass --good-rows-only.")
        if dry_run:
            self.stdout.write(f"Check passed: {report.rows_read} rows, {report.inspections_created} inspection(s). Nothing stored.")
            return
        self.stdout.write(self.style.SUCCESS(
            f"Stored {report.inspections_created} inspection(s), {report.cells_created} cell reading(s); "
            f"{report.inspections_already_stored} already stored."
        ))

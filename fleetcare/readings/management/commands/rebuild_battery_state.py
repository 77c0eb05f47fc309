from django.core.management.base import BaseCommand
from django.db import transaction

from fleetcare.readings import state


class Command(BaseCommand):
    help = ("Recompute every battery's current state (latest readings, state of charge, spread, last equalizing "
            "and watering, charge count) and its totals per month (water added, states of charge before charging) "
            "from its history. The pages read them; every write keeps them "
            "current, so this is needed only after loading history by other means. Safe to run at any time.")

    def add_arguments(self, parser):
        parser.add_argument("--check", action="store_true",
                            help="Change nothing; list the batteries whose stored state differs from their history.")

    def handle(self, *args, check, **options):
        if check:
            differing = state.differences()
            for battery_id, fields in differing.items():
                self.stdout.write(f"battery {battery_id}: {', '.join(sorted(fields))}")
            self.stdout.write(f"{len(differing)} batteries differ from their history.")
            return
        with transaction.atomic():
            count = state.rebuild()
        self.stdout.write(f"Rebuilt the state of {count} batteries.")

import signal
import subprocess
import sys

from django.conf import settings
from django.core.management import call_command
from django.core.management.base import BaseCommand

from fleetcare.budget import demo as budget_demo
from fleetcare.care.detection import detect_fleet
from fleetcare.demo import fleet as demo
from fleetcare.planner import demo as planner_demo


class Command(BaseCommand):
    help = ("Migrate, load the invented demo fleet (once), print the demo logins, then serve like runserver, "
            "with the background worker (db_worker) beside it; stopping the demo stops both.")

    def add_arguments(self, parser):
        parser.add_argument("addrport", nargs="?", default="127.0.0.1:8000")
        parser.add_argument("--no-serve", action="store_true", help="Load the demo and stop; do not start the server.")

    def handle(self, *args, addrport, no_serve, **options):
        call_command("migrate", interactive=False, verbosity=0)
        if demo.load():
            self.stdout.write(self.style.SUCCESS("Demo fleet loaded: two warehouses and a care residence, a year of readings."))
            found = detect_fleet()
            self.stdout.write(f"Checked the fleet: {len(found)} open findings (see Findings in the menu).")
        else:
            self.stdout.write("Demo fleet already loaded; nothing added.")
        budget_demo.load()
        planner_demo.load()
        self.stdout.write("Sign in at http://%s/accounts/login/ as:" % addrport)
        for username, first, last, role in demo.DEMO_USERS:
            self.stdout.write(f"  {role:<14} {username:<17} password {demo.DEMO_PASSWORD}")
        if not no_serve:
            self.serve_with_worker(addrport)

    def serve_with_worker(self, addrport):
        worker = subprocess.Popen(
            [sys.executable, str(settings.BASE_DIR / "manage.py"), "db_worker", "--no-reload", "--interval", "1"],
        )
        self.stdout.write(f"Background worker started (process {worker.pid}): imports and checks run there.")
        signal.signal(signal.SIGTERM, lambda signum, frame: sys.exit(0))  # so `finally` stops the worker too
        try:
            call_command("runserver", addrport, use_reloader=False)
        finally:
            worker.terminate()
            try:
                worker.wait(timeout=30)
            except subprocess.TimeoutExpired:
                worker.kill()

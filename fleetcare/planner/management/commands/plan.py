import json

from django.core.management.base import BaseCommand, CommandError
from django.utils import timezone

from fleetcare import words
from fleetcare.planner import solver
from fleetcare.fleet.models import Site
from fleetcare.planner import inputs as planner_inputs
from fleetcare.planner.plans import build_and_store

MIN_DAYS, MAX_DAYS = 7, 28


class Command(BaseCommand):
    help = "Print a site's equalizing and watering plan for the next 7 to 28 days (stored for the pages too)."

    def add_arguments(self, parser):
        parser.add_argument("--site", required=True, help="Site code, e.g. hrw.")
        parser.add_argument("--days", type=int, default=14, help=f"Days to plan, {MIN_DAYS} to {MAX_DAYS} (default 14).")
        parser.add_argument("--json", action="store_true", help="Print the plan as JSON.")
        parser.add_argument("--solver-seconds", type=float, default=solver.SOLVER_SECONDS,
                            help="Most seconds spent looking for a better order of the work (whole plan).")

    def handle(self, *args, site, days, json: bool, solver_seconds, **options):
        if not MIN_DAYS <= days <= MAX_DAYS:
            raise CommandError(f"--days must be between {MIN_DAYS} and {MAX_DAYS}; got {days}.")
        if solver_seconds <= 0:
            raise CommandError("--solver-seconds must be more than 0.")
        found = Site.objects.filter(code=site).first()
        if found is None:
            known = ", ".join(Site.objects.order_by("code").values_list("code", flat=True)) or "none"
            raise CommandError(f"No site with code “{site}”. Known codes: {known}.")
        entry = planner_inputs.build([found], timezone.now(), days)[found.pk]
        if entry.inputs is None:
            raise CommandError(entry.problem)
        plan = build_and_store(entry, days, solver_seconds)
        violations = solver.check_limits(plan, entry.inputs)
        if json:
            data = plan.to_json_dict()
            data["site"] = found.code
            data["timezone"] = found.timezone
            data["limit_violations"] = [str(v) for v in violations]
            self.stdout.write(_json_dumps(data))
            return
        self.stdout.write(f"{found.name}: {words.count(days, 'day')} from {words.day(entry.today)}; {plan.method}")
        self.stdout.write(f"Days late, all batteries together: {plan.total_overdue_days} ({_how_few(plan)})")
        for task in plan.tasks:
            late = f"  {words.count(task.days_overdue, 'day')} late" if task.days_overdue else ""
            self.stdout.write(f"{words.weekday_time(task.start)}-{task.end:%H:%M}  {task.kind:<9} {task.serial}{late}")
        for missing in plan.unplaced:
            self.stdout.write(f"NOT PLANNED  {missing.kind:<9} {missing.serial}: {missing.reason}")
        for v in violations:
            self.stderr.write(f"LIMIT BROKEN: {v}")


def _how_few(plan):
    if plan.proven_optimal:
        return "the fewest the chargers, shift windows and airflow allow"
    return f"whatever the order, at least {plan.lower_bound_overdue_days}"


def _json_dumps(data):
    return json.dumps(data, indent=2, ensure_ascii=False)

"""Stored plans: one row per site, start date and length, rebuilt whenever what it was built from changes.

The key includes a fingerprint of the planner's inputs, which are built from the readings, top-ups,
equalizing records, findings, policies and rooms; so any of those changing (or a new day) means a
new plan, and pages never show a stale one.
"""
import datetime as dt
import time

from django.db import IntegrityError, transaction

from fleetcare.planner import solver
from fleetcare.planner.models import StoredPlan

PLAN_DAYS = 14
PAGE_SOLVER_SECONDS = 2.0


def plan_from_json(data):
    def task(row):
        return solver.PlannedTask(
            battery_id=row["battery_id"], serial=row["serial"], kind=row["kind"], room_id=row["room_id"],
            day=dt.date.fromisoformat(row["day"]), start=dt.datetime.fromisoformat(row["start"]),
            end=dt.datetime.fromisoformat(row["end"]), due_day=dt.date.fromisoformat(row["due_day"]),
            days_overdue=row["days_overdue"], severity=row["severity"], reason=row["reason"],
        )

    def unplaced(row):
        return solver.UnplacedTask(
            battery_id=row["battery_id"], serial=row["serial"], kind=row["kind"], room_id=row["room_id"],
            due_day=dt.date.fromisoformat(row["due_day"]), days_overdue=row["days_overdue"],
            severity=row["severity"], reason=row["reason"],
        )

    return solver.Plan(
        site_id=data["site_id"], start_date=dt.date.fromisoformat(data["start_date"]), days=data["days"],
        tasks=tuple(task(r) for r in data["tasks"]), unplaced=tuple(unplaced(r) for r in data["unplaced"]),
        lower_bound_overdue_days=data["lower_bound_overdue_days"], proven_optimal=data["proven_optimal"],
        method=data["method"],
    )


def empty_plan(site_inputs, days):
    return solver.Plan(site_id=site_inputs.site.pk, start_date=site_inputs.today, days=days, tasks=(), unplaced=(),
                         lower_bound_overdue_days=0, proven_optimal=True, method="nothing to plan")


def stored_rows(site_inputs_list, days):
    """{site pk: StoredPlan} for these sites' todays, in one query."""
    if not site_inputs_list:
        return {}
    days_wanted = {(s.site.pk, s.today) for s in site_inputs_list}
    rows = StoredPlan.objects.filter(site__in=[s.site.pk for s in site_inputs_list], days=days,
                                     start_date__in={s.today for s in site_inputs_list})
    return {row.site_id: row for row in rows if (row.site_id, row.start_date) in days_wanted}


def plans_for(site_inputs_list, days=PLAN_DAYS, solver_seconds=PAGE_SOLVER_SECONDS, now=None):
    """{site pk: Plan}, from the stored row when its fingerprint still matches, else built and stored."""
    rows = stored_rows(site_inputs_list, days)
    plans = {}
    for entry in site_inputs_list:
        if entry.inputs is None:
            plans[entry.site.pk] = empty_plan(entry, days)
            continue
        fingerprint = entry.fingerprint
        row = rows.get(entry.site.pk)
        if row is not None and row.fingerprint == fingerprint:
            plans[entry.site.pk] = plan_from_json(row.plan_json)
            continue
        plans[entry.site.pk] = build_and_store(entry, days, solver_seconds, fingerprint, now)
    return plans


def build_and_store(entry, days, solver_seconds, fingerprint=None, now=None):
    from django.utils import timezone

    started = time.monotonic()
    plan = solver.plan_care(entry.inputs, solver_seconds=solver_seconds)
    seconds = time.monotonic() - started
    values = {"fingerprint": fingerprint or entry.fingerprint, "plan_json": plan.to_json_dict(),
              "built_at": now or timezone.now(), "build_seconds": seconds}
    try:
        with transaction.atomic():
            StoredPlan.objects.update_or_create(site=entry.site, start_date=entry.today, days=days, defaults=values)
    except IntegrityError:
        pass  # another request stored the same plan at the same moment
    return plan

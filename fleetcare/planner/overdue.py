"""Which batteries are overdue for equalizing or watering, as SQL conditions for the overview's counts and the
battery list's filter: the rule of fleetcare.planner.due, on the planning policy's settings.

By days the rule is a condition on the database: a battery is overdue when nothing was logged on or after the
local midnight that begins `today - interval` at its site (and, with nothing ever logged, it went into service
before that day). When it was last logged comes from the battery's kept state, so the work does not grow with
its history. Where a policy sets an interval by charges, the charges logged decide, so those batteries are
judged in Python by fleetcare.planner.due itself (two more queries, only then). tests/dashboard/test_same_answer.py
checks that every screen gives the planner's answer.
"""
import datetime as dt
import operator
from collections import defaultdict
from functools import reduce

from django.db.models import DateTimeField, F, Max, OuterRef, Q, Subquery
from django.db.models.functions import Coalesce, Greatest
from django.db.models.lookups import IsNull, LessThan

from fleetcare import policy_layers
from fleetcare.fleet import site_time
from fleetcare.fleet.models import Battery, BatteryProfile
from fleetcare.planner import due
from fleetcare.planner import policy as planner_policy
from fleetcare.planner.models import EqualizingCharge, Policy
from fleetcare.readings.models import Inspection

EQUALIZING, WATERING = "equalizing", "watering"
KINDS = {EQUALIZING: "Equalizing overdue", WATERING: "Watering overdue"}
_DAYS = {EQUALIZING: "equalize_every_days", WATERING: "water_every_days"}
_CHARGES = {EQUALIZING: "equalize_every_charges", WATERING: "water_every_charges"}


def policies():
    """The planning policy rows, loaded once for every condition of one page."""
    return list(Policy.objects.select_related("site", "profile"))


def last_done(kind):
    """An expression: when the battery's work of `kind` was last logged, or NULL if never. Read from its kept state
    (fleetcare.readings.state: the latest current reading just after equalizing, the latest current top-up) and,
    for equalizing, its latest charge recorded on the equalizing screen (a few rows per battery, by index)."""
    if kind == WATERING:
        return F("state__watered_at")
    charges = (EqualizingCharge.objects.filter(battery_id=OuterRef("pk")).order_by().values("battery_id")
               .annotate(at=Max(Coalesce("ended_at", "started_at"))).values("at")[:1])
    charged = Subquery(charges, output_field=DateTimeField())
    read = F("state__equalized_at")
    # GREATEST of the two, NULL only when both are (SQLite's MAX() would be NULL when either is).
    return Greatest(Coalesce(read, charged), Coalesce(charged, read))


def _takes(kind):
    if kind == EQUALIZING:
        return Q(profile__equalizing_allowed=True)
    return Q(profile__technology=BatteryProfile.Technology.FLOODED, profile__watering_allowed=True)


def _overdue_by_days(last, days, today, zone):
    """Batteries at a site in `zone` whose `today` it is, not logged since the day `today - days` began there
    (with nothing ever logged: in service before that day)."""
    boundary_day = today - dt.timedelta(days=days)
    boundary = dt.datetime.combine(boundary_day, dt.time(), tzinfo=zone)
    return Q(LessThan(last, boundary)) | (Q(IsNull(last, True)) & Q(in_service_date__lt=boundary_day))


def overdue_q(kind, now, sites, rows=None):
    """One SQL condition for filter() or an annotation: batteries at `sites` overdue for `kind` by the planner's
    rule. `rows`: the planning policy rows (policies()), when the page needs them for both kinds."""
    rows = policies() if rows is None else rows
    parts = policy_layers.partition(rows)
    by_days, by_charges = defaultdict(list), []
    for where, site_id, profile_id in parts:
        settings = planner_policy.resolve(site_id, profile_id, rows)
        if int(getattr(settings, _CHARGES[kind])):
            by_charges.append(where)
        elif int(getattr(settings, _DAYS[kind])):
            by_days[int(getattr(settings, _DAYS[kind]))].append(where)
    sites = list(sites)
    overdue = [Q(pk__in=[])]
    last = last_done(kind)
    # Sites whose day began at the same moment share one condition (a fleet in one zone needs only one).
    by_start = defaultdict(list)
    for site in sites:
        today = site_time.local(now, site).date()
        by_start[(today, dt.datetime.combine(today, dt.time(), tzinfo=site.tzinfo))].append(site)
    for days, wheres in sorted(by_days.items()):
        for (today, _start), alike in sorted(by_start.items(), key=lambda item: item[0][1]):
            overdue.append(Q(site_id__in=[site.pk for site in alike]) & reduce(operator.or_, wheres)
                           & _overdue_by_days(last, days, today, alike[0].tzinfo))
    if by_charges:
        chosen = Battery.objects.filter(reduce(operator.or_, by_charges), site__in=sites)
        overdue.append(Q(pk__in=overdue_by_charges(kind, chosen, now, rows)))
    return Q(status__in=due.CARED_FOR_STATUSES) & _takes(kind) & reduce(operator.or_, overdue)


def overdue_by_charges(kind, batteries, now, rows):
    """[pk] of `batteries` overdue for `kind`, judged by fleetcare.planner.due on the charges logged
    (two queries: the batteries with their last logged work, and the post-charge readings in the window)."""
    chosen = list(batteries.filter(status__in=due.CARED_FOR_STATUSES).filter(_takes(kind))
                  .select_related("site", "profile").annotate(last_done=last_done(kind)))
    since = now - dt.timedelta(days=due.CHARGE_WINDOW_DAYS)
    charges = defaultdict(list)
    for battery_id, taken_at in (Inspection.objects.current().post_charge()
                                 .filter(battery__in=[b.pk for b in chosen], taken_at__gte=since)
                                 .values_list("battery_id", "taken_at")):
        charges[battery_id].append(taken_at)
    found = []
    for b in chosen:
        zone = b.site.tzinfo
        today = now.astimezone(zone).date()
        last_day = b.last_done.astimezone(zone).date() if b.last_done else None
        settings = planner_policy.resolve(b.site_id, b.profile_id, rows)
        dates = [t.astimezone(zone).date() for t in charges[b.pk]]
        if kind == EQUALIZING:
            sched = due.schedule(settings, True, False, dates, last_day, today, b.site.charges_per_day)
            day = due.equalizing_due(sched, today, last_day, b.in_service_date)
        else:
            sched = due.schedule(settings, False, True, dates, None, today, b.site.charges_per_day)
            day = due.watering_due(sched, today, last_day, b.in_service_date)
        if due.days_overdue(day, today):
            found.append(b.pk)
    return found

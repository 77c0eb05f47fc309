"""Reads that feed the budget: the facts for every battery in a fixed number of queries, then the budget.

Queries, whatever the fleet size: batteries (with their kept state, which holds the logged charge count and the
first logged charge), their profiles (with budget settings) and sites, capacity tests, post-charge readings in the
trend window, weak-cell findings, depth of discharge before charging (kept monthly totals, the sites' clocks, the
days before the window's first whole month); then the policy rows (budget and findings) and the assumptions row.
"""
from collections import defaultdict
from itertools import groupby
from operator import itemgetter
from datetime import UTC, datetime, time, timedelta
from decimal import Decimal
from zoneinfo import ZoneInfo

from django.db.models import Count, FloatField, Q, Sum
from django.db.models.functions import Cast, TruncDate
from django.utils import timezone

from fleetcare import charts
from fleetcare.budget import forecast
from fleetcare.budget import policy as budget_policy
from fleetcare.budget.models import BudgetAssumptions, CapacityTest, Policy
from fleetcare.care import policy as care_policy
from fleetcare.care.models import Finding
from fleetcare.care.models import Policy as CarePolicy
from fleetcare.fleet.models import BatteryProfile, Site
from fleetcare.plain_rows import plain_rows
from fleetcare.readings import state
from fleetcare.readings.models import BatteryMonth, Inspection

WEAK_CELL, WEAK_BLOCK = "weak_cell", "weak_block"


def _weak_findings(batteries):
    """Per battery: the cells its active weak-cell finding calls failing (and why), and whether a block is weak."""
    rows = Finding.objects.filter(battery__in=batteries.values("pk"), kind__in=(WEAK_CELL, WEAK_BLOCK)).active()
    found = defaultdict(lambda: {"cells": set(), "block": False, "because": ""})
    for finding in rows.only("battery_id", "kind", "positions", "persistent", "evidence"):
        if finding.kind == WEAK_BLOCK:
            found[finding.battery_id]["block"] = True
        elif finding.failing_positions:
            found[finding.battery_id]["cells"].update(finding.failing_positions)
            found[finding.battery_id]["because"] = finding.failing_because
    return found


def _start_of(day):
    return timezone.make_aware(datetime.combine(day, time.min))


def battery_rules(batteries):
    """{battery_id: forecast.Rules} from each battery's layered budget settings and findings thresholds."""
    budget_policies = list(Policy.objects.select_related("site", "profile"))
    care_policies = list(CarePolicy.objects.select_related("site", "profile"))
    rules, seen = {}, {}
    for battery_id, site_id, profile_id in batteries.values_list("pk", "site_id", "profile_id"):
        key = (site_id, profile_id)
        if key not in seen:
            seen[key] = budget_policy.rules(budget_policy.resolve(site_id, profile_id, budget_policies),
                                            care_policy.resolve_for(site_id, profile_id, care_policies))
        rules[battery_id] = seen[key]
    return rules


DEFAULT_RULES = forecast.Rules()


def battery_facts(batteries, today, rules=DEFAULT_RULES):
    """ServiceHistory for every battery in `batteries` that is not retired, oldest serial first."""
    batteries = batteries.active().order_by("serial")
    # Plain rows, and their few profiles and sites once each: no model instances for 10,000 batteries.
    rows = list(batteries.values_list("pk", "serial", "site_id", "profile_id", "in_service_date",
                                      "state__charge_count", "state__first_post_charge_at"))
    profiles = {p.pk: p for p in BatteryProfile.objects.filter(pk__in={r[3] for r in rows})
                .select_related("budget_settings")}
    sites = {s.pk: s for s in Site.objects.filter(pk__in={r[2] for r in rows})}
    ids = batteries.values("pk")

    tests = defaultdict(list)
    for battery_id, tested_on, percent in CapacityTest.objects.corrected().filter(battery__in=ids).order_by("tested_on", "pk") \
            .values_list("battery_id", "tested_on", "percent_of_rated"):
        tests[battery_id].append((tested_on, float(percent)))

    post_charge = Inspection.objects.current().post_charge().filter(battery__in=ids)
    points = {}
    window = post_charge.filter(scope=Inspection.Scope.ALL_CELLS,
                                taken_at__gte=_start_of(today - timedelta(days=rules.trend_window_days)))
    # Half a million points at 10,000 batteries: the database gives each its UTC day and its figures as floats
    # (the values float() would give), so Python only sorts them into batteries.
    point_rows = plain_rows(window.order_by("battery_id", "taken_at").values_list(
        "battery_id", TruncDate("taken_at", tzinfo=UTC), Cast("sg_mean", FloatField()),
        Cast("sg_spread", FloatField()), "lowest_position", Cast("sg_min", FloatField()),
    ))
    for battery_id, battery_rows in groupby(point_rows, key=itemgetter(0)):
        points[battery_id] = tuple(map(itemgetter(slice(1, None)), battery_rows))  # forecast.PostCharge's fields
    weak = _weak_findings(batteries)
    depths = _measured_depths(batteries, today, rules)

    facts = []
    for pk, serial, site_id, profile_id, in_service_date, charge_count, first_charge_at in rows:
        profile, site = profiles[profile_id], sites[site_id]
        settings = getattr(profile, "budget_settings", None)
        price = settings.unit_price if settings is not None else None
        depth = settings.typical_depth_percent if settings is not None else None
        installation = settings.installation_cost if settings is not None else None
        found = weak.get(pk, {"cells": set(), "block": False, "because": ""})
        facts.append(forecast.ServiceHistory(
            battery_id=pk, serial=serial, site_code=site.code, site_name=site.name,
            profile_id=profile.pk, profile_name=profile.name, in_service_date=in_service_date,
            design_life_years=float(profile.design_life_years), design_cycles=profile.design_cycles,
            charges_per_day=float(site.charges_per_day),
            unit_price=price if price is not None else profile.unit_price,
            weight_kg=profile.weight_kg, cell_count=profile.cell_count,
            traction_tray=profile.application == BatteryProfile.Application.TRACTION and profile.is_flooded,
            full_charge_sg=_float(profile.full_charge_sg),
            logged_charges=charge_count or 0,  # no kept state: no readings yet
            first_logged_charge=first_charge_at.date() if first_charge_at else None,
            capacity_tests=tuple(tests[pk]), post_charge=points.get(pk, ()),
            weak_cells=tuple(sorted(found["cells"])), failing_because=found["because"], weak_block=found["block"],
            measured_depth_percent=depths.get(pk), typical_depth_percent=_float(depth), installation=installation,
        ))
    return facts


def _measured_depths(batteries, today, rules):
    """Mean depth of discharge (100 - state of charge) logged before charging since each battery's site midnight
    `trend_window_days` before today, where there are enough readings.

    The window's whole months come from the kept monthly totals (fleetcare.readings.state); only the days before
    its first whole month are read from the readings: a month of readings at most, whatever the window."""
    first_day = today - timedelta(days=rules.trend_window_days)
    first_month = first_day if first_day.day == 1 else (first_day.replace(day=28) + timedelta(days=4)).replace(day=1)
    sums = defaultdict(lambda: [0, Decimal(0)])
    for battery_id, n, total in (
        BatteryMonth.objects.filter(battery__in=batteries, month__gte=first_month).order_by().values("battery_id")
        .annotate(n=Sum("before_charge_socs"), total=Sum("before_charge_soc_total"))
        .values_list("battery_id", "n", "total")
    ):
        sums[battery_id][0] += n
        sums[battery_id][1] += total
    if first_month > first_day:
        days_before = Q(pk__in=[])
        for zone in sorted(set(batteries.order_by().values_list("site__timezone", flat=True))):
            clock = ZoneInfo(zone)
            days_before |= Q(battery__site__timezone=zone, taken_at__gte=datetime.combine(first_day, time.min, clock),
                             taken_at__lt=datetime.combine(first_month, time.min, clock))
        for battery_id, n, total in (
            Inspection.objects.current().filter(state.COUNTS_FOR_DEPTH, days_before, battery__in=batteries)
            .order_by().values("battery_id").annotate(n=Count("pk"), total=Sum("soc_percent"))
            .values_list("battery_id", "n", "total")
        ):
            sums[battery_id][0] += n
            sums[battery_id][1] += total
    return {pk: 100 - float(total / n) for pk, (n, total) in sums.items() if n and n >= rules.min_trend_points}


def _float(value):
    return None if value is None else float(value)


def replacement_budget(batteries, today=None, years=5, assumptions=None):
    """The budget for `batteries` over `years` from today, and the assumptions it was built on.

    Each battery is judged by its own layered settings; trends read the longest window any of them uses.
    """
    today = today or timezone.localdate()
    assumptions = assumptions or BudgetAssumptions.current()
    rules = battery_rules(batteries.active())
    widest = max(rules.values(), key=lambda r: r.trend_window_days, default=DEFAULT_RULES)
    facts = battery_facts(batteries, today, widest)
    return forecast.build_budget(facts, today, years, assumptions.money(), rules), assumptions


def budget_chart(budget, currency=""):
    labels = [q.label for q in budget.quarter_totals]
    values = [float(q.amount) for q in budget.quarter_totals]
    text = [f"{q.amount:,.0f} ({q.count})" if q.count else "" for q in budget.quarter_totals]
    unit = f" ({currency})" if currency else ""
    return charts.bars(labels, values, "Replacement budget by quarter (batteries in brackets)", f"Amount{unit}",
                       text=text, height=360, series_name="Budget")


def drill_rows(budget, bucket):
    """Each line of a bucket with its battery's whole forecast (for the 'all evidence' list)."""
    if bucket is None:
        return []
    by_battery = {fc.facts.battery_id: fc for fc in budget.forecasts}
    return [
        {"line": ln, "forecast": by_battery.get(ln.facts.battery_id),
         "cell_option": by_battery[ln.facts.battery_id].cell_option if ln.facts.battery_id in by_battery else ()}
        for ln in bucket.lines
    ]

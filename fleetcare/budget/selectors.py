"""Reads that feed the budget: the facts for every battery in a fixed number of queries, then the budget.

Queries, whatever the fleet size: batteries (with profile, site, profile budget settings and the kept state,
which holds the logged charge count and the first logged charge), capacity tests, post-charge readings in the
trend window, depth of discharge before charging, weak-cell findings; then the policy rows (budget and findings)
and the assumptions row.
"""
from collections import defaultdict
from datetime import datetime, time, timedelta

from django.db.models import Avg, Count
from django.utils import timezone

from fleetcare import charts
from fleetcare.budget import forecast
from fleetcare.budget import policy as budget_policy
from fleetcare.budget.models import BudgetAssumptions, CapacityTest, Policy
from fleetcare.care import policy as care_policy
from fleetcare.care.models import Finding
from fleetcare.care.models import Policy as CarePolicy
from fleetcare.fleet.models import BatteryProfile
from fleetcare.readings.models import Inspection

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
    batteries = (batteries.active().select_related("profile", "site", "profile__budget_settings", "state")
                 .order_by("serial"))
    rows = list(batteries)
    ids = batteries.values("pk")

    tests = defaultdict(list)
    for battery_id, tested_on, percent in CapacityTest.objects.corrected().filter(battery__in=ids).order_by("tested_on", "pk") \
            .values_list("battery_id", "tested_on", "percent_of_rated"):
        tests[battery_id].append((tested_on, float(percent)))

    post_charge = Inspection.objects.current().post_charge().filter(battery__in=ids)
    points = defaultdict(list)
    window = post_charge.filter(scope=Inspection.Scope.ALL_CELLS,
                                taken_at__gte=_start_of(today - timedelta(days=rules.trend_window_days)))
    point = forecast.PostCharge
    for battery_id, taken_at, mean, spread, lowest, low in window.order_by("taken_at").values_list(
        "battery_id", "taken_at", "sg_mean", "sg_spread", "lowest_position", "sg_min"
    ):
        points[battery_id].append(point(taken_at.date(), _float(mean), _float(spread), lowest, _float(low)))
    weak = _weak_findings(batteries)
    depths = _measured_depths(ids, today, rules)

    facts = []
    for b in rows:
        profile = b.profile
        settings = getattr(profile, "budget_settings", None)
        price = settings.unit_price if settings is not None else None
        depth = settings.typical_depth_percent if settings is not None else None
        installation = settings.installation_cost if settings is not None else None
        kept = getattr(b, "state", None)  # no row: no readings yet
        found = weak.get(b.pk, {"cells": set(), "block": False, "because": ""})
        facts.append(forecast.ServiceHistory(
            battery_id=b.pk, serial=b.serial, site_code=b.site.code, site_name=b.site.name,
            profile_id=profile.pk, profile_name=profile.name, in_service_date=b.in_service_date,
            design_life_years=float(profile.design_life_years), design_cycles=profile.design_cycles,
            charges_per_day=float(b.site.charges_per_day),
            unit_price=price if price is not None else profile.unit_price,
            weight_kg=profile.weight_kg, cell_count=profile.cell_count,
            traction_tray=profile.application == BatteryProfile.Application.TRACTION and profile.is_flooded,
            full_charge_sg=_float(profile.full_charge_sg),
            logged_charges=kept.charge_count if kept else 0,
            first_logged_charge=kept.first_post_charge_at.date() if kept and kept.first_post_charge_at else None,
            capacity_tests=tuple(tests[b.pk]), post_charge=tuple(points[b.pk]),
            weak_cells=tuple(sorted(found["cells"])), failing_because=found["because"], weak_block=found["block"],
            measured_depth_percent=depths.get(b.pk), typical_depth_percent=_float(depth), installation=installation,
        ))
    return facts


def _measured_depths(ids, today, rules):
    """Mean depth of discharge (100 - state of charge) logged before charging, where there are enough readings."""
    rows = (
        Inspection.objects.current().filter(
            battery__in=ids, situation=Inspection.Situation.BEFORE_CHARGE, soc_percent__isnull=False,
            taken_at__gte=_start_of(today - timedelta(days=rules.trend_window_days)),
        ).order_by().values("battery_id").annotate(n=Count("pk"), soc=Avg("soc_percent"))
    )
    return {r["battery_id"]: 100 - float(r["soc"]) for r in rows if r["n"] >= rules.min_trend_points}


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

"""What the home page shows: the fleet at a glance, per site and for all the user's sites.

Everything is read in a fixed number of queries whatever the fleet size: one row per battery with
its latest figures, then one grouped query, or one read of a window of time, per chart. Time buckets
(weeks, months) are range filters or comparisons with the buckets' edges rather than
TruncWeek/TruncMonth, because on SQLite those truncations run a Python function for every row.
"""

import datetime as dt
import operator
from bisect import bisect_left, bisect_right
from collections import Counter, defaultdict
from decimal import Decimal
from functools import reduce
from types import SimpleNamespace
from urllib.parse import urlencode

from django.db.models import BooleanField, Count, Exists, ExpressionWrapper, F, FloatField, Max, Min, OuterRef, Q
from django.db.models.functions import Cast
from django.urls import reverse
from django.utils import timezone

from fleetcare import charts, policy_layers, words
from fleetcare.care import policy as care_policy
from fleetcare.care.models import Finding
from fleetcare.care.models import Policy as CarePolicy
from fleetcare.care.policy import BY_NAME as CARE_THRESHOLDS
from fleetcare.care.rules import spread_guides
from fleetcare.dashboard import battery_selectors as fleet
from fleetcare.fleet import life, site_time, site_units
from fleetcare.fleet.models import Battery, Fitting
from fleetcare.planner import overdue
from fleetcare.plain_rows import plain_rows
from fleetcare.readings import selectors as reading_selectors
from fleetcare.readings.models import BatteryMonth, Inspection



def _care_default(name, fallback):
    threshold = CARE_THRESHOLDS.get(name)
    return threshold.default if threshold is not None else fallback


# Fleet-wide chart guides use the findings policy's built-in defaults (a site's own override still
# drives its findings; the charts only draw the guide line and count events against it).
DEEP_DISCHARGE_SOC = _care_default("deep_discharge_soc_percent", Decimal(20))  # field notes: 80 % DoD, common practice

SHOWN_STATUSES = (Battery.Status.IN_SERVICE, Battery.Status.CHARGING, Battery.Status.SPARE, Battery.Status.REPAIR)
FINDINGS_WEEKS = 26
WATER_MONTHS = 12
DEEP_DISCHARGE_DAYS = 90
SPREAD_WEEKS = 26
WORST_BATTERIES = 5
SPREAD_CHART_MOST = 10  # batteries with an equalizing finding shown on the spread chart before "and N more"
OUTLIER_LABELS_PER_MONTH = 3
WATER_PROFILES = 4
OUTLIER_MIN_SHARE = 0.25  # FleetCare default, not a published figure: a smaller difference is not worth naming
# Where a finding's own name could be mistaken for a count beside it.
FINDING_LABELS = {"ageing": "Past design life (years or cycles)"}


def overview(batteries, sites, scope=None, now=None):
    """The whole home page. batteries: the user's visible batteries; sites: their visible sites (a
    list); scope: one of those sites to narrow the charts to, or None for all of them."""
    now = now or timezone.now()
    today = timezone.localdate(now)
    batteries = batteries.active()
    rows = _battery_rows(batteries, now, today, sites)
    in_scope = [r for r in rows if scope is None or r["site_id"] == scope.pk]
    scoped = batteries if scope is None else batteries.filter(site=scope)
    finding_counts = _open_findings_by_site_and_kind(batteries)
    care_policies = list(CarePolicy.objects.select_related("site", "profile"))
    return {
        "columns": [{"code": s.code, "name": s.name} for s in sites] + [{"code": "", "name": "All my sites"}],
        "sections": _sections(rows, sites, finding_counts),
        "battery_count": len(in_scope),
        "scope": scope,
        "soc_chart": _soc_chart(in_scope, sites if scope is None else [scope]),
        "findings_chart": _findings_chart({r["pk"] for r in in_scope}, [scope] if scope else sites, now),
        "water_chart": _water_chart(scoped, in_scope, now, scope or site_units.shared_site(sites, "volume_unit")),
        "deep_discharge_chart": _deep_discharge_chart(scoped, now, care_policies),
        "spread_chart": _spread_chart(in_scope, now, {s.pk: s for s in sites}, care_policies),
        "chosen_via": reading_selectors.chosen_via_by_site(sites, now),
        "chosen_via_days": reading_selectors.CHOSEN_VIA_DAYS,
        "chosen_via_others": [label for _, label in reading_selectors.OTHER_WAYS],
    }


def _battery_rows(batteries, now, today, sites):
    """One dict per battery with what the counts need: its latest SOC, whether care is overdue (the planner's
    rule), how far its furthest cell reads behind the others after charge and whether equalizing is due."""
    planning = overdue.policies()
    rows = list(
        batteries.annotate(
            latest_soc=fleet.latest_soc(),
            latest_behind=F("state__post_charge_sg_behind_median"),
            spread_finding=Exists(Finding.objects.active().filter(battery=OuterRef("pk"), kind=Finding.Kind.HIGH_SPREAD)),
            overdue_equalizing=ExpressionWrapper(overdue.overdue_q(overdue.EQUALIZING, now, sites, planning),
                                                 output_field=BooleanField()),
            overdue_watering=ExpressionWrapper(overdue.overdue_q(overdue.WATERING, now, sites, planning),
                                               output_field=BooleanField()),
        )
        .values(
            "pk",
            "serial",
            "site_id",
            "status",
            "in_service_date",
            "latest_soc",
            "latest_behind",
            "spread_finding",
            "overdue_equalizing",
            "overdue_watering",
            "profile__technology",
            "profile_id",
            "profile__watering_allowed",
            "profile__design_life_years",
            "profile__monoblocks",
            "profile__cells_per_block",
            "profile__name",
        )
        .order_by("serial")
    )
    for r in rows:
        flooded = r["profile__technology"] == "flooded"
        r["soc_band"] = fleet.soc_band(r["latest_soc"])
        r["past_life"] = life.is_past_design_life(r["in_service_date"], r["profile__design_life_years"], today)
        r["cells"] = r["profile__monoblocks"] * r["profile__cells_per_block"]
        r["waterable"] = flooded and r["profile__watering_allowed"]
    return rows


def _open_findings_by_site_and_kind(batteries):
    """{(site id, kind): batteries with that finding open}. A battery has at most one active finding of a kind (the
    constraint one_active_finding_per_battery_kind), so the findings are counted, not their distinct batteries:
    a hash count rather than a sort of every open finding."""
    grouped = (
        Finding.objects.active()
        .filter(battery__in=batteries)
        .values("battery__site_id", "kind")
        .annotate(n=Count("*"))
        .order_by()
    )
    return {(g["battery__site_id"], g["kind"]): g["n"] for g in grouped}


def _list_url(list_path, params, site_code):
    query = dict(params)
    if site_code:
        query["site"] = site_code
    return list_path + "?" + urlencode(query)


# What each row of the count table counts: batteries whose `field` has this value (the care rows: is true).
COUNTED_AS_IS = ("status", "soc_band")
COUNTED_WHEN_TRUE = ("overdue_equalizing", "overdue_watering", "past_life")


def _sections(rows, sites, finding_counts):
    """The count table: sections of measures, each measure a row of counts per site and in all."""
    measures = {"status": [], "soc": [], "findings": [], "care": []}
    for status in SHOWN_STATUSES:
        measures["status"].append((Battery.Status(status).label, {"status": status}, ("status", status), False))
    for key, label in fleet.SOC_BAND_LABELS.items():
        measures["soc"].append((label, {"soc": key}, ("soc_band", key), key in ("below20", "20to50")))
    measures["care"] = [
        ("Equalizing overdue", {"overdue": "equalizing"}, ("overdue_equalizing", True), True),
        ("Watering overdue", {"overdue": "watering"}, ("overdue_watering", True), True),
        ("Older than design life (years)", {"past_life": "1"}, ("past_life", True), True),
    ]
    # One pass over the batteries, each counted once per field, rather than tested against every measure.
    counts = Counter()
    for r in rows:
        site = r["site_id"]
        for field in COUNTED_AS_IS:
            counts[(site, field, r[field])] += 1
        for field in COUNTED_WHEN_TRUE:
            if r[field]:
                counts[(site, field, True)] += 1
    list_path = reverse("fleet:batteries")

    def cells(params, count_for):
        out = [{"count": count_for(s.pk), "url": _list_url(list_path, params, s.code), "where": s.name} for s in sites]
        out.append({"count": sum(c["count"] for c in out), "url": _list_url(list_path, params, ""),
                    "where": "all my sites"})
        return out

    sections = []
    for title, group, note in (
        ("Batteries by status", "status", ""),
        (
            "State of charge after the latest charge or rest",
            "soc",
            "Below 20 %: over-discharged. Below 50 %: sulfates if left standing. Readings before charge count "
            "only as deep discharges (see Open findings).",
        ),
    ):
        sections.append(
            {
                "title": title,
                "note": note,
                "rows": [
                    {
                        "label": label,
                        "attention": attention,
                        "cells": cells(params, lambda pk, key=key: counts[(pk, *key)]),
                    }
                    for label, params, key, attention in measures[group]
                ],
            }
        )
    findings_rows = []
    for kind, label in Finding.Kind.choices:
        label = FINDING_LABELS.get(kind, label)
        row_cells = cells({"finding": kind}, lambda pk, k=kind: finding_counts.get((pk, k), 0))
        if row_cells[-1]["count"]:
            findings_rows.append({"label": label, "attention": True, "cells": row_cells})
    sections.append(
        {
            "title": "Open findings (batteries)",
            "rows": findings_rows,
            "note": "" if findings_rows else "None open.",
        }
    )
    sections.append(
        {
            "title": "Care",
            "note": "Overdue: nothing logged within the planner's interval (7 days unless a planning policy "
            "says otherwise), counted from the day in service when nothing is on record.",
            "rows": [
                {
                    "label": label,
                    "attention": attention,
                    "cells": cells(params, lambda pk, key=key: counts[(pk, *key)]),
                }
                for label, params, key, attention in measures["care"]
            ],
        }
    )
    return sections


def _soc_chart(rows, sites):
    if not rows:
        return None
    bands = list(fleet.SOC_BAND_LABELS)
    stacks = []
    by_site = defaultdict(Counter)
    for r in rows:
        by_site[r["site_id"]][r["soc_band"]] += 1
    for site in sites:
        per_band = by_site.get(site.pk)
        if per_band:
            stacks.append((site.name, [per_band[b] for b in bands], None))
    return charts.stacked_bars(
        [fleet.SOC_BAND_SHORT[b] for b in bands],
        stacks,
        "State of charge now<br><sup>each battery at its latest reading after charge or at rest, stacked by site</sup>",
        "Batteries",
    )


def _week_starts(now, weeks):
    """Monday 00:00 (current time zone) of each of the last `weeks` weeks, oldest first, plus the next Monday."""
    local = timezone.localtime(now)
    monday = (local - dt.timedelta(days=local.weekday())).replace(hour=0, minute=0, second=0, microsecond=0)
    return [monday - dt.timedelta(weeks=n) for n in range(weeks - 1, -1, -1)] + [monday + dt.timedelta(weeks=1)]


def _month_starts(now, months):
    """The first instant of each of the last `months` complete months, oldest first, plus this month's."""
    local = timezone.localtime(now)
    first = local.replace(day=1, hour=0, minute=0, second=0, microsecond=0)
    starts = [first]
    for _ in range(months):
        previous = (starts[0] - dt.timedelta(days=1)).replace(day=1)
        starts.insert(0, previous)
    return starts


def _findings_chart(battery_ids, sites, now):
    """Findings opened and cleared per week for the batteries in scope (battery_ids: a set; sites: theirs)."""
    # The weeks' edges on the clock the database's times come on (UTC), so comparing them takes no time zone lookups.
    week_starts = _week_starts(now, FINDINGS_WEEKS)
    edges = [edge.astimezone(dt.timezone.utc) for edge in week_starts]
    n = len(edges) - 1
    opened, cleared = [0] * n, [0] * n
    # Only the findings opened or cleared since the first week began at the sites in scope, read from their time
    # indexes; the batteries in scope are picked out here, as a subquery of them sends PostgreSQL through every
    # finding of every battery instead.
    recent = (
        Finding.objects.filter(Q(opened_at__gte=edges[0]) | Q(cleared_at__gte=edges[0]), battery__site__in=sites)
        .order_by()
        .values_list("battery_id", "opened_at", "cleared_at")
    )
    for battery_id, opened_at, cleared_at in recent:
        if battery_id not in battery_ids:
            continue
        for moment, counts in ((opened_at, opened), (cleared_at, cleared)):
            if moment is not None and edges[0] <= moment < edges[-1]:
                counts[bisect_right(edges, moment) - 1] += 1
    if not any(opened) and not any(cleared):
        return None
    weeks = [e.date().isoformat() for e in week_starts[:-1]]
    return charts.stacked_bars(
        weeks,
        [("Opened", opened, "/"), ("Cleared", cleared, ".")],
        f"Findings per week<br><sup>opened and cleared, last {FINDINGS_WEEKS} weeks (bars start on Monday)</sup>",
        "Findings",
        barmode="group",
    )


def _outliers(values):
    """Indices of the values outside Tukey's fences and at least OUTLIER_MIN_SHARE away from the
    median (none for fewer than four values): a tight fleet should not name a battery 5 % off."""
    if len(values) < 4:
        return []
    _q1, median, _q3, low, high = charts.tukey_fences(values)
    margin = OUTLIER_MIN_SHARE * abs(median)
    return [i for i, v in enumerate(values) if (v < low or v > high) and abs(v - median) >= margin]


def _water_chart(batteries, rows, now, unit_site=None):
    """Water per cell per month for each waterable battery: a box per month for each battery profile
    (like compared with like), outliers named. A flooded battery in service with no water logged in a
    month counts as zero (missed watering). Amounts are in unit_site's units (mL when the sites shown differ).
    Each battery's months are those of its site's clock (the kept monthly totals, fleetcare.readings.state)."""
    edges = _month_starts(now, WATER_MONTHS)
    waterable = [r for r in rows if r["waterable"]]
    if not waterable:
        return None
    # The kept monthly totals (on each battery's site clock): twelve rows per battery, not a year of top-ups, turned
    # into one row per battery with a column per month (None where nothing was logged).
    # The totals as floats (exactly float() of each stored amount) straight from the driver: 120,000 of them at
    # 10,000 batteries, each otherwise converted by a Python call.
    months = [edges[i].date() for i in range(len(edges) - 1)]
    columns = {f"m{i}": Max(Cast("water_ml", FloatField()), filter=Q(month=month)) for i, month in enumerate(months)}
    by_battery = {
        row[0]: row[1:]
        for row in plain_rows(BatteryMonth.objects.filter(
            battery__in=batteries, month__gte=months[0], month__lt=edges[-1].date(), top_ups__gt=0,
        ).order_by().values("battery_id").annotate(**columns).values_list("battery_id", *columns))
    }
    by_profile = defaultdict(list)
    for r in waterable:
        by_profile[r["profile__name"]].append(r)
    ranked = sorted(by_profile.items(), key=lambda kv: (-len(kv[1]), kv[0]))
    if len(ranked) > WATER_PROFILES:
        others = [r for _name, members in ranked[WATER_PROFILES - 1 :] for r in members]
        ranked = ranked[: WATER_PROFILES - 1] + [("Other profiles", others)]
    series = [(name, *_water_boxes(members, by_battery, edges, unit_site)) for name, members in ranked]
    return charts.box_with_outliers(
        series,
        f"Water added per cell per month, by battery profile<br><sup>last {WATER_MONTHS} complete months · box: middle "
        "half, whiskers: lowest to highest · named: far off its profile at its own site</sup>",
        f"{site_units.cell_water_label(unit_site)} per cell" if unit_site else "mL per cell (your sites use different units)",
    )


def _water_boxes(members, by_battery, edges, unit_site=None):
    """Box values per month for one profile, and the batteries that stand out against the others of
    that profile at their own site (sites charge differently, so their water use differs too).
    by_battery: {battery id: its total in each month, None where nothing was logged}."""
    months = range(len(edges) - 1)
    month_days = [edges[i].date() for i in months]
    in_use = (Battery.Status.IN_SERVICE, Battery.Status.CHARGING)
    shown = site_units.cell_water_shown_at(unit_site) if unit_site else None
    nothing_logged = [None] * len(months)
    never = len(months)
    per_cell = defaultdict(dict)  # cells -> {total: value shown}: thousands of battery-months share a few thousand

    # Per site and month, the values of the batteries that count, in the members' order, with their serials and
    # their places among the members. A month with nothing logged counts (as zero) from the first month that
    # starts on or after the day a working battery went into service.
    by_site = {}
    for place, r in enumerate(members):
        totals = by_battery.get(r["pk"], nothing_logged)
        counted_from = bisect_left(month_days, r["in_service_date"]) if r["status"] in in_use else never
        cells, serial = r["cells"], r["serial"]
        shown_for = per_cell[cells]
        site_months = by_site.get(r["site_id"])
        if site_months is None:
            site_months = by_site[r["site_id"]] = [([], [], []) for _ in months]
        for i, total in enumerate(totals):
            if total is None:
                if i < counted_from:
                    continue
                total = 0
            value = shown_for.get(total)
            if value is None:
                ml = float(total) / cells
                value = shown_for[total] = float(shown(ml)) if unit_site else round(ml, 1)
            values, serials, places = site_months[i]
            values.append(value)
            serials.append(serial)
            places.append(place)

    groups, outliers = [], []
    for i in months:
        month = edges[i].strftime("%b %Y")
        per_site = [site_months[i] for site_months in by_site.values() if site_months[i][0]]
        groups.append((month, [value for values, _serials, _places in per_site for value in values]))
        # Sites in the order their first counted battery comes among the members, so that batteries equally far
        # off are named in the members' order.
        per_site.sort(key=lambda site: site[2][0])
        flagged = []
        for site_values, serials, _places in per_site:
            middle = sorted(site_values)[len(site_values) // 2]
            flagged.extend((abs(site_values[j] - middle), (site_values[j], serials[j])) for j in _outliers(site_values))
        flagged.sort(key=lambda f: -f[0])
        for rank, (_distance, (value, serial)) in enumerate(flagged):
            outliers.append((month, value, serial if rank < OUTLIER_LABELS_PER_MONTH else ""))
    return groups, outliers


def deep_discharge_limits(policies=None):
    """[(condition on an inspection's battery, state-of-charge limit)] from the findings policy, so the
    chart counts what the deep-discharge finding counts (one query for the policy rows unless given them)."""
    if policies is None:
        policies = list(CarePolicy.objects.select_related("site", "profile"))
    return [
        (
            where,
            care_policy.resolve(
                SimpleNamespace(site_id=site_id, profile_id=profile_id), policies
            ).deep_discharge_soc_percent,
        )
        for where, site_id, profile_id in policy_layers.partition(policies, prefix="battery__")
    ]


def deep_discharge_by_truck_and_shift(batteries, since, policies=None):
    """{(asset number, shift): events}: readings (any situation) under the deep-discharge limit,
    each counted against the truck and shift the battery was fitted to when it was read (the latest
    fitting that covers it).

    Three queries whatever the fleet size: events counted per battery with their first and last time;
    the fittings of those batteries; and the single events of only those batteries whose span of
    events is not inside one fitting (a battery moved to another truck meanwhile), matched here.
    Counting in SQL spares fetching every event: about 13,000 rows at 1,000 batteries."""
    under = reduce(operator.or_, [where & Q(soc_percent__lt=limit) for where, limit in deep_discharge_limits(policies)])
    events = (
        Inspection.objects.current()
        .filter(
            under,
            battery__in=batteries,
            taken_at__gte=since,
        )
        .order_by()
    )
    # Count("*"), not the id, which is not in the index the events are read from.
    per_battery = plain_rows(
        events.values("battery_id").annotate(n=Count("*"), first=Min("taken_at"), last=Max("taken_at"))
        .values_list("battery_id", "n", "first", "last")
    )
    fittings = defaultdict(list)
    # The fittings of the batteries in scope (those without events are not looked at): the batteries as a subquery,
    # not thousands of ids as parameters.
    fitted = (
        Fitting.objects.filter(battery__in=batteries)
        .filter(Q(removed_at__isnull=True) | Q(removed_at__gt=since))
        .order_by("-fitted_at")
        .values_list("battery_id", "fitted_at", "removed_at", "vehicle__asset_number", "shift")
    )
    per_battery = list(per_battery)
    for battery_id, fitted_at, removed_at, truck, shift in plain_rows(fitted) if per_battery else ():
        fittings[battery_id].append((fitted_at, removed_at, truck, shift))

    def covers(fitting, start, end):
        fitted_at, removed_at, _truck, _shift = fitting
        return fitted_at <= start and (removed_at is None or removed_at > end)

    # Per battery, the fittings its span of events touches (written out rather than as calls: ten thousand batteries).
    counts, moved = Counter(), []
    for battery_id, n, first, last in per_battery:
        touching = [f for f in fittings.get(battery_id, ()) if f[0] <= last and (f[1] is None or f[1] > first)]
        if not touching:
            counts[("Not fitted", "No shift set")] += n
        elif len(touching) == 1 and covers(touching[0], first, last):
            _fitted_at, _removed_at, truck, shift = touching[0]
            counts[(truck, shift or "No shift set")] += n
        else:
            moved.append(battery_id)
    if moved:
        for battery_id, taken_at in events.filter(battery_id__in=moved).values_list("battery_id", "taken_at"):
            fitting = next((f for f in fittings[battery_id] if covers(f, taken_at, taken_at)), None)
            truck, shift = (fitting[2], fitting[3]) if fitting else (None, None)
            counts[(truck or "Not fitted", shift or "No shift set")] += 1
    return dict(counts)


def _deep_discharge_chart(batteries, now, policies=None):
    counts = deep_discharge_by_truck_and_shift(batteries, now - dt.timedelta(days=DEEP_DISCHARGE_DAYS), policies)
    if not counts:
        return None
    per_truck = Counter()
    for (truck, _shift), n in counts.items():
        per_truck[truck] += n
    trucks = [t for t, _n in sorted(per_truck.items(), key=lambda kv: (-kv[1], kv[0]))[:15]]
    shifts = sorted({shift for _truck, shift in counts})
    return charts.stacked_bars(
        trucks,
        [(shift, [counts.get((t, shift), 0) for t in trucks], None) for shift in shifts],
        f"Deep discharge by truck and shift<br><sup>in use or before charge, under {DEEP_DISCHARGE_SOC:.0f} % "
        f"(or the site's limit), last {words.count(DEEP_DISCHARGE_DAYS, 'day')}</sup>",
        "Readings",
        barmode="group",
    )


def _spread_chart(rows, now, sites, policies):
    """How far behind the other cells each battery's weakest cell reads after charge: the furthest any cell is
    below the median of the other cells, the spread rule's own measure (care.rules.spread_is_high), over time,
    with the rule's lines at each battery's settings. Shown: every flooded battery with an open spread finding
    (marked "equalizing due"; the furthest behind first, at most SPREAD_CHART_MOST), then the furthest behind of
    the others up to WORST_BATTERIES (sites: {pk: site}; policies: the findings policy rows)."""
    judged = [r for r in rows if r["latest_behind"] is not None and r["profile__technology"] == "flooded"]
    order = sorted(judged, key=lambda r: (-r["latest_behind"], r["serial"]))
    due = [r for r in order if r["spread_finding"]]
    others = [r for r in order if not r["spread_finding"]]
    shown = due[:SPREAD_CHART_MOST] + others[:max(0, WORST_BATTERIES - len(due))]
    if not shown:
        return None
    serial = {r["pk"]: r["serial"] for r in shown}
    site_of = {r["pk"]: sites[r["site_id"]] for r in shown}
    readings = (
        Inspection.objects.current()
        .post_charge()
        .filter(
            battery_id__in=serial,
            scope=Inspection.Scope.ALL_CELLS,
            sg_behind_median__isnull=False,
            taken_at__gte=now - dt.timedelta(weeks=SPREAD_WEEKS),
        )
        .order_by("taken_at", "pk")
        .values_list("battery_id", "taken_at", "sg_behind_median")
    )
    series = defaultdict(lambda: ([], []))
    for battery_id, taken_at, behind in readings:
        series[battery_id][0].append(site_time.local(taken_at, site_of[battery_id]).replace(tzinfo=None).isoformat())
        series[battery_id][1].append(_sg_points(behind))
    names = {r["pk"]: f"{r['serial']} (equalizing due)" if r["spread_finding"] else r["serial"] for r in shown}
    more = len(due) - SPREAD_CHART_MOST
    fig = charts.line(
        [(names[pk], *series[pk]) for pk in serial if pk in series],
        "Cells behind the others after charge"
        f"<br><sup>the cell furthest below the median of the other cells, corrected SG, last {SPREAD_WEEKS} weeks"
        f"{f'; {more} more batteries with equalizing due are on the findings list' if more > 0 else ''}</sup>",
        "Points of SG behind",
        x_title="Each battery's site time",
        height=380,
    )
    lines = _spread_guide_lines(shown, policies)
    highest = max((y for y, _label in lines), default=None)
    for y, label in lines:
        charts.reference_line(fig, y, label, above=y == highest)
    return fig


def _sg_points(sg):
    """An SG difference in points (0.001); half points kept, as a median of two cells can give."""
    value = round(float(sg) * 1000, 1)
    return int(value) if value == int(value) else value


def _spread_guide_lines(rows, policies):
    """[(points, label)]: the spread rule's lines at the settings in force for these batteries; where batteries
    differ, each line names its batteries."""
    by_guides = defaultdict(list)
    for r in rows:
        by_guides[spread_guides(care_policy.resolve_for(r["site_id"], r["profile_id"], policies))].append(r["serial"])
    lines = []
    for guides, serials in by_guides.items():
        whose = f" ({', '.join(serials)})" if len(by_guides) > 1 else ""
        once = _sg_points(guides.once_sg)
        if guides.in_a_row > 1:
            lines.append((once, f"over {once} points once: equalizing due{whose}"))
            lines.append((_sg_points(guides.in_a_row_sg),
                          f"over {_sg_points(guides.in_a_row_sg)} points on {guides.in_a_row} charges in a row, "
                          f"same cell: equalizing due{whose}"))
        else:
            lines.append((once, f"over {once} points: equalizing due{whose}"))
    return lines

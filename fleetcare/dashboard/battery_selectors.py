"""Reads that feed the fleet pages, each in a fixed number of queries whatever the history length."""

import datetime as dt
from collections import defaultdict
from dataclasses import dataclass, field

from django.core.paginator import Paginator
from django.db.models import F, OuterRef, Q, Subquery
from django.utils import timezone

from fleetcare import charts
from fleetcare.care.models import Finding
from fleetcare.fleet import life, site_time, site_units
from fleetcare.fleet.models import Battery, BatteryProfile, Fitting
from fleetcare.planner import overdue
from fleetcare.readings.models import BatteryState, CellReading, Inspection, WaterTopUp

HEATMAP_INSPECTIONS = 40
LIST_PAGE_SIZE = 50

# State-of-charge bands at the latest reading that shows state of charge (after charge, or rested; a
# before-charge reading counts only as a deep discharge, a finding). 20 % is the deepest a motive battery should be run
# (80 % depth of discharge) and below 50 % a standing battery sulfates (field notes, common practice).
SOC_BANDS = (
    ("below20", "Below 20 %", None, 20),
    ("20to50", "20–50 %", 20, 50),
    ("50to80", "50–80 %", 50, 80),
    ("80up", "80 % and over", 80, None),
)
NO_READING = "none"
SOC_BAND_LABELS = {key: label for key, label, _, _ in SOC_BANDS} | {NO_READING: "No reading after charge or rest"}
SOC_BAND_SHORT = {
    "below20": "< 20 %",
    "20to50": "20–50 %",
    "50to80": "50–80 %",
    "80up": "≥ 80 %",
    NO_READING: "none yet",
}

# When equalizing and watering are overdue is the planner's rule (fleetcare.planner.due and .overdue).
OVERDUE_KINDS = overdue.KINDS


def latest_soc():
    """A battery's state of charge at its latest reading that shows one (after charge, or rested), as kept in its
    state row (readings.state). The overview's bands, the battery list's column and its filter all use this one
    expression."""
    return F("state__soc_percent")


def with_latest_reading(batteries):
    """Annotate each battery with its state of charge (latest_soc()), its latest current inspection's time and
    situation, and the spread of its latest all-cell inspection (a pilot reading has no spread worth showing):
    read from the battery's kept state, one row whatever the length of its history."""
    return batteries.annotate(
        latest_soc=latest_soc(),
        latest_spread=F("state__sg_spread"),
        latest_taken_at=F("state__latest_at"),
        latest_situation=F("state__latest_situation"),
        current_asset=Subquery(
            Fitting.objects.filter(battery=OuterRef("pk"), removed_at__isnull=True).values("vehicle__asset_number")[:1]
        ),
    )


def past_design_life_q(today):
    """Batteries whose profile's design life has run out since they went into service (one query for the profiles)."""
    q = Q(pk__in=[])
    for profile_id, years in BatteryProfile.objects.values_list("pk", "design_life_years"):
        q |= Q(profile_id=profile_id, in_service_date__lte=today - dt.timedelta(days=life.design_life_days(years)))
    return q


def soc_band(soc):
    """The key of the band a state of charge falls in (NO_READING for None)."""
    if soc is None:
        return NO_READING
    for key, _label, low, high in SOC_BANDS:
        if (low is None or soc >= low) and (high is None or soc < high):
            return key
    return NO_READING


def soc_band_q(key):
    """Needs with_latest_reading()."""
    if key == NO_READING:
        return Q(latest_soc__isnull=True)
    for band, _label, low, high in SOC_BANDS:
        if band == key:
            q = Q()
            if low is not None:
                q &= Q(latest_soc__gte=low)
            if high is not None:
                q &= Q(latest_soc__lt=high)
            return q
    raise ValueError(key)


def finding_kinds():
    return list(Finding.Kind.choices)


SORTS = {
    "serial": "serial",
    "site": "site__name",
    "profile": "profile__name",
    "status": "status",
    "fitted": "current_asset",
    "latest": "latest_taken_at",
    "soc": "latest_soc",
    "spread": "latest_spread",
    "in_service": "in_service_date",
}


@dataclass
class BatteryFilters:
    """What the battery list is narrowed to, read from the query string; unknown values are ignored."""

    query: str = ""
    site: str = ""
    profile: str = ""
    status: str = ""
    soc: str = ""
    finding: str = ""
    overdue: str = ""
    past_life: bool = False
    sort: str = "serial"
    descending: bool = False
    errors: list = field(default_factory=list)

    @classmethod
    def from_query(cls, params):
        f = cls(query=params.get("q", "").strip(), site=params.get("site", ""))
        profile = params.get("profile", "")
        f.profile = profile if profile.isdigit() else ""
        status = params.get("status", "")
        f.status = status if status in Battery.Status.values else ""
        soc = params.get("soc", "")
        f.soc = soc if soc in SOC_BAND_LABELS else ""
        finding = params.get("finding", "")
        f.finding = finding if finding in dict(finding_kinds()) else ""
        overdue = params.get("overdue", "")
        f.overdue = overdue if overdue in OVERDUE_KINDS else ""
        f.past_life = params.get("past_life") == "1"
        sort = params.get("sort", "serial")
        f.descending = sort.startswith("-")
        f.sort = sort.lstrip("-") if sort.lstrip("-") in SORTS else "serial"
        return f

    def as_params(self, **changes):
        """The filters as query-string pairs (for links that keep them), with some changed."""
        values = {
            "q": self.query,
            "site": self.site,
            "profile": self.profile,
            "status": self.status,
            "soc": self.soc,
            "finding": self.finding,
            "overdue": self.overdue,
            "past_life": "1" if self.past_life else "",
            "sort": ("-" if self.descending else "") + self.sort if self.sort != "serial" or self.descending else "",
        }
        values.update(changes)
        return {k: v for k, v in values.items() if v}

    def chips(self):
        """The filters in words, for the heading of the list."""
        words = []
        if self.status:
            words.append(Battery.Status(self.status).label)
        if self.soc:
            words.append(f"state of charge {SOC_BAND_LABELS[self.soc]}")
        if self.finding:
            words.append(f"open finding: {dict(finding_kinds())[self.finding]}")
        if self.overdue:
            words.append(OVERDUE_KINDS[self.overdue])
        if self.past_life:
            words.append("older than design life")
        return words


def battery_list(batteries, filters, now, sites=()):
    """The battery list narrowed and sorted by filters: a queryset to page, in one query per page.
    `sites`: the user's sites (loaded once by the page; "overdue" is judged in each site's own day)."""
    batteries = batteries.select_related("profile", "site")
    if filters.query:
        batteries = batteries.filter(
            Q(serial__icontains=filters.query)
            | Q(
                pk__in=Fitting.objects.filter(
                    removed_at__isnull=True, vehicle__asset_number__icontains=filters.query
                ).values("battery_id")
            )
        )
    if filters.site:
        batteries = batteries.filter(site__code=filters.site)
    if filters.profile:
        batteries = batteries.filter(profile_id=int(filters.profile))
    if filters.status:
        batteries = batteries.filter(status=filters.status)
    else:
        batteries = batteries.active()
    batteries = with_latest_reading(batteries)
    if filters.soc:
        batteries = batteries.filter(soc_band_q(filters.soc))
    if filters.finding:
        batteries = batteries.filter(pk__in=Finding.objects.active().filter(kind=filters.finding).values("battery_id"))
    if filters.overdue:
        batteries = batteries.filter(overdue.overdue_q(filters.overdue, now, sites))
    if filters.past_life:
        batteries = batteries.filter(past_design_life_q(timezone.localdate(now)))
    column = F(SORTS[filters.sort])
    order = column.desc(nulls_last=True) if filters.descending else column.asc(nulls_last=True)
    return batteries.order_by(order, "serial")


# How far back the battery record's charts reach unless asked for more (months; 0: the whole history). A year
# shows a season's pattern; older readings stay in the paged table and the CSV (our own choice).
CHART_SPANS = ((12, "Last 12 months"), (36, "Last 3 years"), (0, "Whole history"))
CHART_MONTHS = 12
RECORD_PAGE_SIZE = 50
RECENT_TOP_UPS = 20


def chart_months(value):
    """The chart span asked for in the query string, or the default for anything else."""
    return int(value) if str(value) in {str(months) for months, _ in CHART_SPANS} else CHART_MONTHS


def battery_record(battery, *, page=None, months=CHART_MONTHS, now=None):
    """The battery record: its charts over the last `months` months (0: all), one page of its readings, its
    latest reading (from its kept state) and latest top-ups. The work is bounded by the span and the page,
    not by how long the battery's history is."""
    now = now or timezone.now()
    since = now - dt.timedelta(days=round(months * 30.44)) if months else None
    current = Inspection.objects.current().filter(battery=battery)
    in_span = current if since is None else current.filter(taken_at__gte=since)
    charted = list(in_span.only("pk", "taken_at", "situation", "scope", "soc_percent", "sg_mean", "lowest_position")
                   .order_by("-taken_at", "-pk"))
    top_ups = WaterTopUp.objects.current().filter(battery=battery)
    # Water is charted by month: from the start of the span's first month, so that month is not cut short.
    month_start = since and site_time.local(since, battery).replace(day=1, hour=0, minute=0, second=0, microsecond=0)
    watered = list((top_ups if since is None else top_ups.filter(done_at__gte=month_start)).only("done_at", "volume_ml"))
    table = Paginator(current.select_related("taken_by").order_by("-taken_at", "-pk"), RECORD_PAGE_SIZE).get_page(page)
    kept = BatteryState.objects.filter(battery=battery).select_related("latest_inspection").first()
    rows = list(table.object_list)
    recent_top_ups = list(top_ups.select_related("done_by").order_by("-done_at")[:RECENT_TOP_UPS])
    for row in [*rows, *recent_top_ups] + ([kept.latest_inspection] if kept and kept.latest_inspection else []):
        row.battery = battery  # the page shows their times on the battery's site clock: no query per row
    return {
        "battery": battery,
        "profile": battery.profile,
        "inspections": rows,
        "readings_page": table,
        "inspection_count": table.paginator.count,
        "latest": kept and kept.latest_inspection,
        "fittings": list(Fitting.objects.filter(battery=battery).select_related("vehicle")),
        "top_ups": recent_top_ups,
        "chart_months": months,
        "chart_spans": CHART_SPANS,
        "charted_count": len(charted),
        "soc_chart": soc_chart(battery, charted),
        "heatmap": sg_heatmap(battery, charted),
        "water_chart": water_chart(battery, watered),
    }


def soc_chart(battery, inspections):
    """State of charge over time, on the site's clock (plotly is given the local wall time, no offset)."""
    points = [(i.taken_at, i.soc_percent) for i in reversed(inspections) if i.soc_percent is not None]
    if not points:
        return None
    by_kind = defaultdict(lambda: ([], []))
    for inspection in reversed(inspections):
        if inspection.soc_percent is None:
            continue
        label = "After charge" if inspection.is_post_charge else "Other readings"
        by_kind[label][0].append(site_time.local(inspection.taken_at, battery).replace(tzinfo=None).isoformat())
        by_kind[label][1].append(float(inspection.soc_percent))
    series = [(name, xs, ys) for name, (xs, ys) in sorted(by_kind.items())]
    return charts.line(series, "State of charge over time", "State of charge (%)", y_range=(0, 105),
                       x_title=f"Site time ({site_time.zone_of(battery).key})")


def sg_heatmap(battery, inspections):
    if battery.profile.reads_by_block:
        return None
    all_cells = [i for i in inspections if i.scope == Inspection.Scope.ALL_CELLS and i.sg_mean is not None]
    recent = list(reversed(all_cells[:HEATMAP_INSPECTIONS]))
    if not recent:
        return None
    index = {inspection.pk: col for col, inspection in enumerate(recent)}
    cells = battery.profile.cell_count
    z = [[None] * len(recent) for _ in range(cells)]
    for inspection_id, position, sg in CellReading.objects.filter(inspection_id__in=index).values_list(
        "inspection_id", "position", "sg_corrected"
    ):
        if sg is not None and 1 <= position <= cells:
            z[position - 1][index[inspection_id]] = float(sg)
    x = _column_labels([site_time.local(i.taken_at, battery) for i in recent])
    y = [f"Cell {n}" for n in range(1, cells + 1)]
    lowest = [
        (x[col], y[i.lowest_position - 1])
        for col, i in enumerate(recent)
        if i.lowest_position and 1 <= i.lowest_position <= cells
    ]
    return charts.heatmap(
        x,
        y,
        z,
        "Corrected SG by cell and reading<br><sup>a weak cell shows as a dark stripe; × marks each reading's "
        "lowest cell</sup>",
        "SG",
        height=max(320, 18 * cells + 120),
        marks=lowest,
        marks_name="Lowest cell",
    )


def _column_labels(moments):
    """'2 Mar 26' per reading, with the time added where two readings share a day (columns must differ)."""
    days = [f"{m.day} {m:%b %y}" for m in moments]
    return [f"{d} {m:%H:%M}" if days.count(d) > 1 else d for d, m in zip(days, moments)]


def water_chart(battery, top_ups):
    if not top_ups:
        return None
    per_month = defaultdict(float)
    for top_up in top_ups:
        month = site_time.local(top_up.done_at, battery).strftime("%Y-%m")
        per_month[month] += float(top_up.volume_ml) / battery.profile.cell_count
    months = sorted(per_month)
    values = [float(site_units.cell_water_shown(per_month[m], battery)) for m in months]
    return charts.bars(months, values, "Water added per cell per month", f"{site_units.cell_water_label(battery)} per cell")

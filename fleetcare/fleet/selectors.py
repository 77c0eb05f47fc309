"""Reads that feed the fleet pages, each in a fixed number of queries whatever the history length."""
from collections import defaultdict

from django.db.models import OuterRef, Subquery

from fleetcare import charts
from fleetcare.fleet.models import Fitting
from fleetcare.readings.models import CellReading, Inspection, WaterTopUp

HEATMAP_INSPECTIONS = 40


def with_latest_reading(batteries):
    """Annotate each battery with its latest current inspection's SOC, spread, time and situation."""
    latest = Inspection.objects.current().filter(battery=OuterRef("pk")).order_by("-taken_at")
    return batteries.annotate(
        latest_soc=Subquery(latest.values("soc_percent")[:1]),
        latest_spread=Subquery(latest.values("sg_spread")[:1]),
        latest_taken_at=Subquery(latest.values("taken_at")[:1]),
        latest_situation=Subquery(latest.values("situation")[:1]),
        current_asset=Subquery(
            Fitting.objects.filter(battery=OuterRef("pk"), removed_at__isnull=True).values("vehicle__asset_number")[:1]
        ),
    )


def battery_record(battery):
    inspections = list(
        Inspection.objects.current().filter(battery=battery).select_related("taken_by").order_by("-taken_at")
    )
    fittings = list(Fitting.objects.filter(battery=battery).select_related("vehicle"))
    top_ups = list(WaterTopUp.objects.current().filter(battery=battery).select_related("done_by").order_by("-done_at"))
    return {
        "battery": battery,
        "profile": battery.profile,
        "inspections": inspections[:50],
        "inspection_count": len(inspections),
        "latest": inspections[0] if inspections else None,
        "fittings": fittings,
        "top_ups": top_ups[:20],
        "soc_chart": soc_chart(inspections),
        "heatmap": sg_heatmap(battery, inspections),
        "water_chart": water_chart(battery, top_ups),
    }


def soc_chart(inspections):
    points = [(i.taken_at, i.soc_percent) for i in reversed(inspections) if i.soc_percent is not None]
    if not points:
        return None
    by_kind = defaultdict(lambda: ([], []))
    for inspection in reversed(inspections):
        if inspection.soc_percent is None:
            continue
        label = "After charge" if inspection.is_post_charge else "Other readings"
        by_kind[label][0].append(inspection.taken_at.isoformat())
        by_kind[label][1].append(float(inspection.soc_percent))
    series = [(name, xs, ys) for name, (xs, ys) in sorted(by_kind.items())]
    return charts.line(series, "State of charge over time", "State of charge (%)", y_range=(0, 105))


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
    x = [i.taken_at.strftime("%Y-%m-%d %H:%M") for i in recent]
    y = [f"Cell {n}" for n in range(1, cells + 1)]
    return charts.heatmap(
        x, y, z, "Corrected SG by cell (a weak cell shows as a dark stripe)", "SG",
        height=max(320, 18 * cells + 120),
    )


def water_chart(battery, top_ups):
    if not top_ups:
        return None
    per_month = defaultdict(float)
    for top_up in top_ups:
        per_month[top_up.done_at.strftime("%Y-%m")] += float(top_up.volume_ml) / battery.profile.cell_count
    months = sorted(per_month)
    values = [round(per_month[m]) for m in months]
    return charts.bars(months, values, "Water added per cell per month", "mL per cell")


def fleet_soc_chart(batteries):
    bands = ["0–20 %", "20–50 %", "50–80 %", "80–100 %", "no reading"]
    counts = dict.fromkeys(bands, 0)
    for battery in batteries:
        counts[soc_band(battery.latest_soc)] += 1
    return charts.bars(bands, [counts[b] for b in bands], "Batteries by state of charge at their latest reading", "Batteries")


def soc_band(soc):
    if soc is None:
        return "no reading"
    if soc < 20:
        return "0–20 %"
    if soc < 50:
        return "20–50 %"
    if soc < 80:
        return "50–80 %"
    return "80–100 %"

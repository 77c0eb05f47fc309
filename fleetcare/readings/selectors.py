"""Reads that feed the reading pages, each in a fixed number of queries."""
import datetime as dt
from collections import Counter

from django.db.models import Count
from django.utils import timezone

from fleetcare.readings.models import CsvImport, Inspection

RECENT_IMPORTS = 10

# How far back the overview counts how batteries were picked: long enough for a site's habit to show,
# short enough that a change of habit shows within weeks (our own choice, not a published figure).
CHOSEN_VIA_DAYS = 30
OTHER_WAYS = [(value, label) for value, label in Inspection.ChosenVia.choices if value != Inspection.ChosenVia.SCAN]


def tray_columns(positions):
    """Rows of six suit 12-36 cell trays; 32 and 40 cells read better in rows of eight."""
    if positions <= 6:
        return positions
    return 8 if positions % 8 == 0 and positions % 6 else 6


def inspection_page(inspection):
    cells = list(inspection.cells.all())
    mean = inspection.sg_mean
    rows = []
    for cell in cells:
        vs_mean = None
        if mean is not None and cell.sg_corrected is not None:
            vs_mean = int((cell.sg_corrected - mean) * 1000)
        rows.append({"cell": cell, "vs_mean": vs_mean, "is_lowest": cell.position == inspection.lowest_position})
    revisions = []
    older = inspection.supersedes
    while older is not None:
        revisions.append(older)
        older = older.supersedes
    return {
        "inspection": inspection,
        "battery": inspection.battery,
        "profile": inspection.battery.profile,
        "rows": rows,
        "low_levels": [c.position for c in cells if c.level == "low"],
        "revisions": revisions,
        "superseded_by": Inspection.objects.filter(supersedes=inspection).first(),
        "tray_columns": tray_columns(inspection.battery.profile.positions),
    }


def recent_imports(user):
    """The user's latest imports, newest first, for the upload page."""
    return list(CsvImport.objects.filter(uploaded_by=user).order_by("-uploaded_at")[:RECENT_IMPORTS])


def import_page(job):
    """An import's page: while it runs, where to ask for progress; once done, its result as kept."""
    result = job.result or {}
    problem_count = result.get("problem_count", 0)
    return {
        "job": job,
        "result": result,
        "problems": [dict(zip(("line", "cell", "column", "message"), note)) for note in result.get("problems", [])],
        "checks": [dict(zip(("line", "cell", "column", "message"), note)) for note in result.get("checks", [])],
        "already": [dict(zip(("line", "cell", "column", "message"), note)) for note in result.get("already", [])],
        "problems_cut": problem_count > len(result.get("problems", [])),
        "checks_cut": result.get("check_count", 0) > len(result.get("checks", [])),
        "already_cut": result.get("inspections_already_stored", 0) > len(result.get("already", [])),
    }


def chosen_via_by_site(sites, now=None, days=CHOSEN_VIA_DAYS):
    """Per site, the current readings of the last `days` days counted by how their battery was picked: one query.

    Returns one dict per site (in the order given): site, total, by_scan, scan_share (0-1, None without
    readings), scan_percent (whole percent) and others (counts in the order of OTHER_WAYS)."""
    now = now or timezone.now()
    grouped = (
        Inspection.objects.current()
        .filter(battery__site__in=sites, taken_at__gte=now - dt.timedelta(days=days), taken_at__lte=now)
        .values("battery__site_id", "chosen_via")
        .annotate(n=Count("*"))  # not the id, which would send PostgreSQL from the index to the table
        .order_by()
    )
    counts = {site.pk: Counter() for site in sites}
    for row in grouped:
        counts[row["battery__site_id"]][row["chosen_via"]] += row["n"]
    out = []
    for site in sites:
        by_via = counts[site.pk]
        total = sum(by_via.values())
        by_scan = by_via[Inspection.ChosenVia.SCAN]
        out.append({
            "site": site, "total": total, "by_scan": by_scan, "scan_share": by_scan / total if total else None,
            "scan_percent": round(100 * by_scan / total) if total else None,
            "others": [by_via[value] for value, _ in OTHER_WAYS],
        })
    return out

"""Reads that feed the reading pages, each in a fixed number of queries."""
from fleetcare.readings.models import CsvImport, Inspection

RECENT_IMPORTS = 10


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

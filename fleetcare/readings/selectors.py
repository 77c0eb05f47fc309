"""Reads that feed the reading pages, each in a fixed number of queries."""
from fleetcare.readings.models import Inspection


def inspection_page(inspection):
    cells = list(inspection.cells.all())
    mean = inspection.sg_mean
    rows = []
    for cell in cells:
        below = None
        if mean is not None and cell.sg_corrected is not None:
            below = mean - cell.sg_corrected
        rows.append({"cell": cell, "below_mean": below, "is_lowest": cell.position == inspection.lowest_position})
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
    }

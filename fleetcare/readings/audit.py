"""Reads of the audit trail: what was corrected or removed, by whom, when and why."""
from django.db.models import Q

from fleetcare.readings.models import ReadingChange
from fleetcare.readings.models import Inspection

BATTERY_HISTORY_ROWS = 50


def battery_history(battery, limit=BATTERY_HISTORY_ROWS):
    """The battery's latest corrections and removals, newest first (one query)."""
    return list(
        ReadingChange.objects.filter(battery=battery)
        .select_related("changed_by", "inspection", "new_revision", "top_up")
        .order_by("-changed_at", "-pk")[:limit]
    )


def inspection_versions(inspection):
    """Every version of this reading, oldest first, each with the change that made or removed it (two queries).

    Returns dicts: version (1, 2, ...), inspection, made_by (the correction that stored it, or None for
    the original), removed_by (the removal, or None).
    """
    revised = {
        i.pk: i
        for i in Inspection.objects.filter(battery_id=inspection.battery_id)
        .filter(Q(supersedes__isnull=False) | Q(superseded_by__isnull=False))
        .select_related("taken_by")
    }
    successor = {i.supersedes_id: i for i in revised.values()}
    chain = [inspection]
    while chain[0].supersedes_id is not None:
        chain.insert(0, revised[chain[0].supersedes_id])
    while chain[-1].pk in successor:
        chain.append(successor[chain[-1].pk])
    changes = ReadingChange.objects.filter(inspection_id__in=[i.pk for i in chain]).select_related("changed_by")
    made = {c.new_revision_id: c for c in changes if c.action == ReadingChange.Action.CORRECTED}
    removed = {c.inspection_id: c for c in changes if c.action == ReadingChange.Action.REMOVED}
    return [
        {"version": n, "inspection": i, "made_by": made.get(i.pk), "removed_by": removed.get(i.pk)}
        for n, i in enumerate(chain, start=1)
    ]

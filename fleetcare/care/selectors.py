"""Reads that feed the findings pages, each in a fixed number of queries."""
from django.db.models import Q

from fleetcare.care.models import Finding

HISTORY_SHOWN = 10


def _with_related(queryset):
    return queryset.select_related("battery", "battery__site", "battery__profile", "acknowledged_by", "inspection")


def findings_list(user, *, site=None, kind="", serial="", state="active"):
    findings = _with_related(Finding.objects.visible_to(user))
    if site is not None:
        findings = findings.filter(battery__site=site)
    if kind:
        findings = findings.filter(kind=kind)
    if serial:
        findings = findings.filter(battery__serial__icontains=serial)
    if state == "active":
        findings = findings.active()
    elif state in Finding.State.values:
        findings = findings.filter(state=state)
    return findings.order_by("-severity", "battery__serial", "kind", "-opened_at")


def battery_findings(battery):
    """Active findings of one battery, and its most recent cleared ones as history."""
    rows = list(_with_related(Finding.objects.filter(battery=battery)).order_by("-severity", "-opened_at"))
    active = [f for f in rows if f.is_active]
    history = sorted((f for f in rows if not f.is_active), key=lambda f: f.cleared_at or f.opened_at, reverse=True)
    return {"findings": active, "history": history[:HISTORY_SHOWN], "battery": battery}


def inspection_findings(inspection):
    """The battery's active findings and any finding this inspection showed."""
    rows = list(
        _with_related(Finding.objects.filter(Q(battery_id=inspection.battery_id, state__in=Finding.ACTIVE)
                                             | Q(inspection=inspection)))
        .order_by("-severity", "-opened_at")
    )
    return {"findings": [f for f in rows if f.is_active], "history": [f for f in rows if not f.is_active],
            "battery": inspection.battery, "inspection": inspection}

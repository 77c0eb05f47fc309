"""Which readings and top-ups a user may see: another site's answer 404."""
from django.shortcuts import get_object_or_404

from fleetcare.fleet.access import visible_sites
from fleetcare.readings.models import Inspection, WaterTopUp


def visible_inspections(user):
    """Every revision, current or not, of inspections at the user's sites (filter with .current() to count them)."""
    return Inspection.objects.filter(battery__site__in=visible_sites(user))


def inspection_or_404(user, pk):
    return get_object_or_404(
        visible_inspections(user).select_related("battery__profile", "battery__site", "taken_by", "deleted_by"), pk=pk
    )


def visible_top_ups(user):
    return WaterTopUp.objects.filter(battery__site__in=visible_sites(user))


def top_up_or_404(user, pk):
    return get_object_or_404(visible_top_ups(user).select_related("battery__profile", "battery__site", "done_by"), pk=pk)

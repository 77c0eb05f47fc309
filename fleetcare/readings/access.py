"""Which readings and top-ups a user may see: another site's answer 404."""
from django.db.models import Q
from django.shortcuts import get_object_or_404

from fleetcare.accounts.roles import ADMINISTRATOR, has_role
from fleetcare.fleet.access import visible_sites
from fleetcare.readings.models import CsvImport, Inspection, WaterTopUp


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


def visible_csv_imports(user):
    """An import is seen by its uploader and by the people of the uploader's sites (administrators: all)."""
    if has_role(user, ADMINISTRATOR):
        return CsvImport.objects.all()
    return CsvImport.objects.filter(Q(uploaded_by__sites__in=visible_sites(user)) | Q(uploaded_by=user)).distinct()


def csv_import_or_404(user, import_id):
    return get_object_or_404(visible_csv_imports(user).select_related("uploaded_by"), pk=import_id)

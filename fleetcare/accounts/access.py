"""Who may see what: every view fetches site objects through these, so another site's objects answer 404."""
from django.shortcuts import get_object_or_404

from fleetcare.fleet.models import Battery, Site


def visible_sites(user):
    return Site.objects.for_user(user)


def visible_batteries(user):
    return Battery.objects.visible_to(user)


def battery_or_404(user, pk):
    return get_object_or_404(visible_batteries(user).select_related("profile", "site", "charging_room"), pk=pk)

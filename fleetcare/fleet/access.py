"""Which sites and batteries a user may see: another site's answer 404."""
from django.shortcuts import get_object_or_404

from fleetcare.accounts.roles import ADMINISTRATOR, has_role
from fleetcare.fleet.models import Battery, Site


def visible_sites(user):
    """Administrators (and superusers) see every site; everyone else, managers included, only their own."""
    if has_role(user, ADMINISTRATOR):
        return Site.objects.all()
    return Site.objects.for_user(user)


def site_or_404(user, code):
    return get_object_or_404(visible_sites(user), code=code)


def visible_batteries(user):
    return Battery.objects.filter(site__in=visible_sites(user))


def battery_or_404(user, pk):
    return get_object_or_404(visible_batteries(user).select_related("profile", "site", "charging_room"), pk=pk)

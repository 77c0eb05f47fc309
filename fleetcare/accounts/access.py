"""Who may see and do what.

Every view is wrapped in role_required(least_role) (or public_view for sign-in pages), and fetches
site objects through the helpers here, so another site's objects answer 404.
"""
from functools import wraps

from django.contrib.auth.views import redirect_to_login
from django.core.exceptions import PermissionDenied
from django.shortcuts import get_object_or_404

from fleetcare.accounts.roles import ADMINISTRATOR, has_role
from fleetcare.fleet.models import Battery, Site
from fleetcare.readings.models import Inspection, WaterTopUp


def role_required(least_role):
    """Signed-in users holding least_role or higher; others are sent to sign in (anonymous) or refused (403)."""

    def decorator(view):
        @wraps(view)
        def wrapped(request, *args, **kwargs):
            if not request.user.is_authenticated:
                return redirect_to_login(request.get_full_path())
            if not has_role(request.user, least_role):
                raise PermissionDenied(f"This needs the {least_role} role.")
            return view(request, *args, **kwargs)

        wrapped.least_role = least_role
        return wrapped

    return decorator


def public_view(view):
    view.least_role = None
    return view


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

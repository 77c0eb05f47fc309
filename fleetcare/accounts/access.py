"""Who may do what: every view is wrapped in role_required(least_role), or public_view for sign-in pages.

Views fetch site objects through fleetcare.fleet.access and fleetcare.readings.access, so another
site's objects answer 404.
"""
from functools import wraps

from django.contrib.auth.views import redirect_to_login
from django.core.exceptions import PermissionDenied

from fleetcare.accounts.roles import has_role


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

"""The four roles, as Django groups, ranked: each role can do everything the one below it can.

Views declare the least role they need with fleetcare.accounts.access.role_required; site scoping
(another site's objects answer 404) is separate and done by the access helpers.
"""
from django.contrib.auth.models import Group, Permission

CREW = "crew"
SUPERVISOR = "supervisor"
MANAGER = "manager"
ADMINISTRATOR = "administrator"
ROLES = (CREW, SUPERVISOR, MANAGER, ADMINISTRATOR)
RANK = {role: rank for rank, role in enumerate(ROLES)}


def ensure_groups():
    """The four groups; administrators also hold every Django permission, so they can manage people in the admin.

    The other roles get no admin permissions: the admin is not scoped to sites, the app's pages are.
    """
    groups = {name: Group.objects.get_or_create(name=name)[0] for name in ROLES}
    groups[ADMINISTRATOR].permissions.set(Permission.objects.all())
    return groups


def role_of(user):
    """The highest role a user holds, or None. Superusers are administrators."""
    if not user.is_authenticated:
        return None
    if user.is_superuser:
        return ADMINISTRATOR
    cached = getattr(user, "_fleetcare_role", False)
    if cached is not False:
        return cached
    names = set(user.groups.values_list("name", flat=True))
    role = next((r for r in reversed(ROLES) if r in names), None)
    user._fleetcare_role = role
    return role


def has_role(user, least_role):
    role = role_of(user)
    return role is not None and RANK[role] >= RANK[least_role]

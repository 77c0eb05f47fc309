"""The four roles, as Django groups. Permissions are attached in fleetcare.accounts.permissions."""
from django.contrib.auth.models import Group

CREW = "crew"
SUPERVISOR = "supervisor"
MANAGER = "manager"
ADMINISTRATOR = "administrator"
ROLES = (CREW, SUPERVISOR, MANAGER, ADMINISTRATOR)


def ensure_groups():
    return {name: Group.objects.get_or_create(name=name)[0] for name in ROLES}


def role_of(user):
    """The highest role a user holds (administrator > manager > supervisor > crew), or None."""
    if not user.is_authenticated:
        return None
    if user.is_superuser:
        return ADMINISTRATOR
    names = set(user.groups.values_list("name", flat=True))
    for role in reversed(ROLES):
        if role in names:
            return role
    return None

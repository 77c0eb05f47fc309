from django import template

from fleetcare.accounts.roles import SUPERVISOR, has_role

register = template.Library()


@register.filter
def plans_the_week(user):
    """Supervisors and above see the week view per charging room."""
    return has_role(user, SUPERVISOR)

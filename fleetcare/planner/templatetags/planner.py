from django import template

from fleetcare import words
from fleetcare.accounts.roles import SUPERVISOR, has_role

register = template.Library()


@register.filter
def plans_the_week(user):
    """Supervisors and above see the week view per charging room."""
    return has_role(user, SUPERVISOR)


@register.filter
def friendly_dates(text):
    """'last on 2026-10-12' reads as 'last on 12 Oct 2026' (the planner writes ISO dates)."""
    return words.iso_dates_in_words(text)

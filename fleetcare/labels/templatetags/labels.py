from django import template

from fleetcare.accounts.roles import SUPERVISOR, has_role

register = template.Library()


@register.filter
def can_print_labels(user):
    return user.is_authenticated and has_role(user, SUPERVISOR)

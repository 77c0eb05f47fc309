from django import template

from fleetcare.accounts.roles import MANAGER, has_role

register = template.Library()


@register.filter
def can_see_budget(user):
    """Managers and administrators see the replacement budget."""
    return bool(getattr(user, "is_authenticated", False)) and has_role(user, MANAGER)


@register.filter
def money(value):
    """12345.6 -> '12,345.60'; None -> an en dash."""
    if value is None or value == "":
        return "–"
    return f"{value:,.2f}"

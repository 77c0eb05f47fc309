from django import template
from django.utils import timezone

from fleetcare.accounts.roles import MANAGER, SUPERVISOR, has_role
from fleetcare.budget import selectors
from fleetcare.budget.models import CapacityTest
from fleetcare.fleet.models import Battery

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


@register.inclusion_tag("budget/_battery_forecast.html", takes_context=True)
def replacement_forecast(context, battery):
    """For the battery page: its replacement forecast and capacity tests (supervisors and up; empty otherwise)."""
    user = context.get("request").user if context.get("request") else None
    if user is None or not getattr(user, "is_authenticated", False) or not has_role(user, SUPERVISOR):
        return {"show": False}
    only = Battery.objects.filter(pk=battery.pk)
    budget, assumptions = selectors.replacement_budget(only, today=timezone.localdate())
    return {
        "show": True, "battery": battery, "forecast": budget.forecasts[0] if budget.forecasts else None,
        "lines": budget.lines, "currency": assumptions.currency, "floor": budget.rules_in_force("capacity_floor_percent")[0],
        "tests": CapacityTest.objects.filter(battery=battery).order_by("-tested_on")[:10],
        "is_manager": has_role(user, MANAGER),
    }

from django import template

from fleetcare.readings.audit import battery_history
from fleetcare.accounts.roles import SUPERVISOR, has_role
from fleetcare.readings.models import WaterTopUp

register = template.Library()


@register.inclusion_tag("readings/_battery_history.html", takes_context=True)
def reading_history(context, battery):
    """Corrections and removals on a battery's record, for its page."""
    user = context.get("user")
    can_change = user is not None and has_role(user, SUPERVISOR)
    top_ups = []
    if can_change:
        top_ups = list(WaterTopUp.objects.current().filter(battery=battery).select_related("done_by").order_by("-done_at")[:20])
        for top_up in top_ups:
            top_up.battery = battery  # shown on the battery's site clock: no query per row
    return {"changes": battery_history(battery), "battery": battery, "can_change": can_change, "top_ups": top_ups}


@register.filter
def can_change_readings(user):
    return has_role(user, SUPERVISOR)

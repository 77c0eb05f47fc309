import datetime as dt
import re

from django import template

from fleetcare.accounts.roles import SUPERVISOR, has_role

register = template.Library()


@register.filter
def plans_the_week(user):
    """Supervisors and above see the week view per charging room."""
    return has_role(user, SUPERVISOR)


_ISO_DATE = re.compile(r"\b(\d{4})-(\d{2})-(\d{2})\b")


@register.filter
def friendly_dates(text):
    """'last on 2026-10-12' reads as 'last on 12 Oct' (the planner writes ISO dates)."""

    def short(match):
        try:
            return dt.date(*map(int, match.groups())).strftime("%-d %b")
        except ValueError:
            return match.group(0)

    return _ISO_DATE.sub(short, str(text))

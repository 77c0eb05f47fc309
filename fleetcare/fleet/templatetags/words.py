"""The one date style on screen (fleetcare.words), as filters built into every template:
{{ when|day }} 3 Dec 2026 · {{ when|moment }} 3 Dec 2026 14:05 · {{ when|weekday }} Thu 3 Dec ·
{{ when|weekday_time }} Thu 3 Dec 14:05 · {{ when|month }} Dec 2026 · {{ when|clock }} 14:05 ·
{{ when|zone_name }} the zone's name, e.g. Europe/London.
Like Django's |date they show a moment on the clock the page renders in (site_clock, or |site_time before)."""
from django import template
from django.template.defaultfilters import date as date_filter
from django.template.defaultfilters import time as time_filter

from fleetcare import words

register = template.Library()


def _style(name, fmt):
    shown = time_filter if fmt == words.CLOCK else date_filter  # |clock also takes a time of day

    def show(value):
        return shown(value, fmt) if value not in (None, "") else ""

    show.__name__ = name
    register.filter(name, show, expects_localtime=True)


for _name, _fmt in (("day", words.DAY), ("moment", words.MOMENT), ("weekday", words.WEEKDAY),
                    ("weekday_time", words.WEEKDAY_TIME), ("month", words.MONTH), ("clock", words.CLOCK),
                    ("zone_name", "e")):
    _style(_name, _fmt)

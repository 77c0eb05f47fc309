"""Times, temperatures and water amounts in a template, each in the site of the object it belongs to.

{% load site %}
{{ inspection.taken_at|site_time:inspection|date:"j M Y H:i T" }}   the site's clock, with its zone's abbreviation
{{ inspection.temp_c|site_temp:battery }}                          '77.0 °F' or '25.0 °C' ('–' when unknown)
{{ top_up.volume_ml|site_volume:battery }}                         '12.3 US fl oz' or '0.36 L'
{% temp_unit battery %} {% volume_unit battery %}                  the unit alone, for column headings
"""
from django import template
from django.templatetags.tz import do_timezone

from fleetcare.fleet import site_time as clock
from fleetcare.fleet import site_units

register = template.Library()


@register.filter("site_time")
def site_time_filter(moment, obj):
    """A stored moment on the clock of `obj`'s site; the date filter after it keeps that zone."""
    if moment in (None, ""):
        return moment
    return do_timezone(moment, clock.zone_of(obj))



@register.filter
def site_temp(temp_c, obj):
    value = site_units.temp_shown(temp_c, obj) if temp_c not in (None, "") else None
    return "–" if value is None else f"{value} {site_units.temp_label(obj)}"


@register.filter
def site_temp_value(temp_c, obj):
    """The number alone, for a column whose heading carries the unit."""
    value = site_units.temp_shown(temp_c, obj) if temp_c not in (None, "") else None
    return "–" if value is None else str(value)


@register.filter
def site_volume(ml, obj):
    value = site_units.volume_shown(ml, obj) if ml not in (None, "") else None
    return "–" if value is None else f"{value} {site_units.volume_label(obj)}"


@register.filter
def site_volume_value(ml, obj):
    value = site_units.volume_shown(ml, obj) if ml not in (None, "") else None
    return "–" if value is None else str(value)


@register.simple_tag
def temp_unit(obj):
    return site_units.temp_label(obj)


@register.simple_tag
def volume_unit(obj):
    return site_units.volume_label(obj)


@register.simple_tag
def zone_label(obj):
    """'CST (America/Chicago)': the zone a page's times are in, labelled where sites could differ."""
    return clock.zone_label(obj)

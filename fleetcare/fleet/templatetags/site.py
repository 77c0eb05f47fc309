"""Times, temperatures and water amounts in a template, each in the site of the object it belongs to.

{% load site %}
{{ inspection.taken_at|site_time:inspection|moment }}                the site's clock
{% site_when inspection.taken_at battery %}                         the same, then the zone: '1 Nov 2026 01:30 CST'
{{ inspection.temp_c|site_temp:battery }}                          '77.0 °F' or '25.0 °C' ('–' when unknown)
{{ top_up.volume_ml|site_volume:battery }}                         '12.3 US fl oz' or '0.36 L'
{% temp_unit battery %} {% volume_unit battery %}                  the unit alone, for column headings
"""
import datetime as dt

from django import template

from fleetcare import words
from fleetcare.fleet import site_time as clock
from fleetcare.fleet import site_units

register = template.Library()


@register.filter("site_time")
def site_time_filter(moment, obj):
    """A stored moment on the clock of `obj`'s site; the date filter after it keeps that zone."""
    if not isinstance(moment, dt.datetime):
        return moment
    local = clock.local(moment, obj)
    # Django's own |timezone filter drops `fold`, so 01:30 CST in the repeated hour would print as CDT.
    return _SiteMoment(local.year, local.month, local.day, local.hour, local.minute, local.second,
                       local.microsecond, local.tzinfo, fold=local.fold)


class _SiteMoment(dt.datetime):
    convert_to_local_time = False  # already on the site's clock: the date filter must not move it



@register.simple_tag
def site_when(moment, obj):
    """The moment on the site's clock in the one date style, then the zone's abbreviation: '1 Nov 2026 01:30 CST'.
    (Django's own "T" leaves the abbreviation blank inside the repeated hour, the one time it matters most.)"""
    if not isinstance(moment, dt.datetime):
        return ""
    local = clock.local(moment, obj)
    return f"{words.moment(local)} {local.tzname()}"


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
def site_per_degree(value_per_c, obj):
    return site_units.per_degree_shown(value_per_c, obj)


@register.filter
def site_volume(ml, obj):
    value = site_units.volume_shown(ml, obj) if ml not in (None, "") else None
    return "–" if value is None else f"{value} {site_units.volume_label(obj)}"


@register.filter
def site_volume_value(ml, obj):
    value = site_units.volume_shown(ml, obj) if ml not in (None, "") else None
    return "–" if value is None else str(value)


@register.filter
def site_cell_water_value(ml, obj):
    """A per-cell amount, number alone (mL or US fl oz), for a column whose heading carries the unit."""
    value = site_units.cell_water_shown(ml, obj) if ml not in (None, "") else None
    return "–" if value is None else str(value)


@register.filter
def entered_otherwise(volume_entered, obj):
    """What the crew typed, when it says more than the amount in the site's unit does (per cell, another unit)."""
    if not volume_entered or volume_entered.endswith(site_units.volume_label(obj)):
        return ""
    return volume_entered


@register.simple_tag
def cell_water_unit(obj):
    return site_units.cell_water_label(obj)


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

"""{% battery_findings battery %} and {% inspection_findings inspection %}: the findings panel, with its own data."""
from datetime import date, datetime

from django import template
from django.utils import timezone

from fleetcare import words
from fleetcare.accounts.roles import SUPERVISOR, has_role
from fleetcare.care import selectors
from fleetcare.fleet import site_time, site_units
from fleetcare.readings.models import Inspection

register = template.Library()

LABELS = {
    "taken_at": "taken", "situation": "situation", "sg_mean": "mean SG", "sg_max": "highest SG", "sg_min": "lowest SG",
    "sg_spread": "spread", "lowest_cell": "lowest cell", "full_charge_sg": "full-charge SG",
    "short_points": "points short", "soc_percent": "state of charge %", "last_charge_at": "last charge logged",
    "in_service_date": "in service since", "days_without_charge": "days without a charge", "vehicle": "truck or chair",
    "shift": "shift", "reported_at": "reported", "level": "level", "position": "cell", "last_top_up_at": "last top-up",
    "days_since": "days since", "done_at": "done", "before_charge": "before charge",
    "hours_since_charge": "hours after charge", "gap_v": "gap (V)", "not_rested": "not used",
    "years_in_service": "years in service", "cycles_logged": "charges logged", "cycles_estimated": "cycles estimated",
    "charges_per_day": "charges per day", "charges_per_day_from": "charges per day from",
}
SKIP = {"inspection_id"}


def _show(value, battery):
    if isinstance(value, str) and len(value) >= 19 and value[4] == "-" and "T" in value:
        try:
            moment = datetime.fromisoformat(value)
        except ValueError:
            return value
        if timezone.is_naive(moment):
            return words.moment(moment)
        local = site_time.local(moment, battery)
        return f"{words.moment(local)} {local.tzname()}"
    if isinstance(value, str) and len(value) == 10 and value[4] == "-" and value[7] == "-":
        try:
            return words.day(date.fromisoformat(value))
        except ValueError:
            return value
    if value is None:
        return "–"
    if value is True:
        return "yes"
    if value is False:
        return "no"
    return str(value)


@register.filter
def reading_lines(reading, battery):
    """One evidence reading as (label, text) pairs in plain words, times and amounts as the battery's site reads them."""
    lines = []
    for key, value in reading.items():
        if key in SKIP:
            continue
        if key == "cells":
            for cell in value:
                lines.append((f"cell {cell['position']}", f"{cell['sg_corrected']:.3f}, {cell['below_others_points']} "
                              f"points below the other cells' mean, {cell['below_highest_points']} below the highest"))
        elif key == "lagging_cells":
            for cell in value:
                lines.append((f"cell {cell['position']}",
                              f"{cell['below_median_points']} points below the median of the other cells"))
        elif key == "blocks":
            lines.append(("blocks", ", ".join(f"block {p}: {v:.2f} V" for p, v in value.items())))
        elif key == "volume_ml":
            amount = site_units.volume_shown(value, battery)
            lines.append(("water added (whole battery)", f"{amount} {site_units.volume_label(battery)}"))
        elif key == "situation" and value in Inspection.Situation.values:
            lines.append(("situation", Inspection.Situation(value).label.lower()))
        elif key in ("temp_c", "temperature_c"):
            lines.append(("temperature", f"{site_units.temp_shown(value, battery)} {site_units.temp_label(battery)}"))
        else:
            lines.append((LABELS.get(key, key.replace("_", " ")), _show(value, battery)))
    return lines


@register.filter
def can_acknowledge(user):
    return has_role(user, SUPERVISOR)


@register.inclusion_tag("care/_battery_findings.html", takes_context=True)
def battery_findings(context, battery):
    data = selectors.battery_findings(battery)
    data.update(user=context.get("user"), request=context.get("request"), panel_title="Findings")
    return data


@register.inclusion_tag("care/_battery_findings.html", takes_context=True)
def inspection_findings(context, inspection):
    data = selectors.inspection_findings(inspection)
    data.update(user=context.get("user"), request=context.get("request"), panel_title="Findings for this battery")
    return data

"""Reads for the API, each in a fixed number of queries, always through the user's sites."""
from django.db.models import Prefetch
from django.templatetags.static import static
from django.urls import reverse

from fleetcare.care.models import Finding
from fleetcare.fleet.access import visible_batteries, visible_sites
from fleetcare.fleet.models import Battery, BatteryProfile, Fitting
from fleetcare.planner.selectors import work_due_for_battery
from fleetcare.readings.models import BatteryState, Inspection, WaterTopUp


def _float(value):
    return None if value is None else float(value)


def batteries_for(user, site_code=None, include_retired=False):
    """The user's batteries with their profile, site and the vehicle each is fitted to now: three queries."""
    batteries = visible_batteries(user).select_related("profile", "site").prefetch_related(
        Prefetch("fittings", queryset=Fitting.objects.filter(removed_at__isnull=True).select_related("vehicle"),
                 to_attr="open_fittings")
    ).order_by("serial")
    if site_code:
        batteries = batteries.filter(site__code=site_code)
    if not include_retired:
        batteries = batteries.active()
    return [battery_row(b) for b in batteries]


def battery_row(battery):
    fittings = getattr(battery, "open_fittings", None)
    if fittings is None:
        fitting = battery.current_fitting()
        fittings = [fitting] if fitting else []
    return {
        "id": battery.pk,
        "serial": battery.serial,
        "site": battery.site.code,
        "profile": battery.profile_id,
        "status": battery.status,
        "pilot_cell": battery.pilot_cell,
        "positions": battery.profile.positions,
        "reads_by_block": battery.profile.reads_by_block,
        "vehicle": fittings[0].vehicle.asset_number if fittings else None,
        "inspect_url": reverse("readings:inspect", args=[battery.pk]),
        "top_up_url": reverse("readings:top_up", args=[battery.pk]),
    }


def sites_for(user):
    return [
        {"code": s.code, "name": s.name, "timezone": s.timezone, "temp_unit": s.temp_unit, "volume_unit": s.volume_unit}
        for s in visible_sites(user).order_by("name")
    ]


def profiles_for(user):
    """Profiles of the batteries at the user's sites (profiles belong to no site themselves): one query."""
    profiles = BatteryProfile.objects.filter(batteries__in=visible_batteries(user)).distinct().order_by("name")
    return [
        {
            "id": p.pk, "name": p.name, "maker": p.maker, "technology": p.technology, "application": p.application,
            "nominal_voltage": float(p.nominal_voltage), "monoblocks": p.monoblocks,
            "cells_per_block": p.cells_per_block, "cell_count": p.cell_count, "positions": p.positions,
            "reads_by_block": p.reads_by_block, "capacity_ah": float(p.capacity_ah),
            "full_charge_sg": _float(p.full_charge_sg), "discharged_sg": _float(p.discharged_sg),
            "watering_allowed": p.watering_allowed, "equalizing_allowed": p.equalizing_allowed,
        }
        for p in profiles
    ]


def inspection_row(inspection):
    """The API's view of one stored inspection. Built from the database only, so a resend gets the same body."""
    return {
        "id": inspection.pk,
        "client_uuid": inspection.client_uuid,
        "battery": inspection.battery_id,
        "serial": inspection.battery.serial,
        "taken_at": inspection.taken_at,
        "taken_by": inspection.taken_by.get_username(),
        "situation": inspection.situation,
        "scope": inspection.scope,
        "temp_c": _float(inspection.temp_c),
        "hydrometer_compensated": inspection.hydrometer_compensated,
        "hours_since_charge": _float(inspection.hours_since_charge),
        "notes": inspection.notes,
        "sg_mean": _float(inspection.sg_mean),
        "sg_min": _float(inspection.sg_min),
        "sg_max": _float(inspection.sg_max),
        "sg_spread": _float(inspection.sg_spread),
        "lowest_position": inspection.lowest_position,
        "volts_total": _float(inspection.volts_total),
        "soc_percent": _float(inspection.soc_percent),
        "soc_basis": inspection.soc_basis,
        "chosen_via": inspection.chosen_via,
        "is_current": inspection.is_current and inspection.deleted_at is None,
        "recorded_at": inspection.recorded_at,
        "cells": [
            {"position": c.position, "sg": _float(c.sg), "sg_corrected": _float(c.sg_corrected),
             "volts": _float(c.volts), "level": c.level}
            for c in inspection.cells.all()
        ],
        "url": reverse("readings:inspection", args=[inspection.pk]),
    }


def stored_inspection(pk):
    return Inspection.objects.select_related("battery", "taken_by").prefetch_related("cells").get(pk=pk)


def top_up_row(top_up):
    return {
        "id": top_up.pk,
        "client_uuid": top_up.client_uuid,
        "battery": top_up.battery_id,
        "serial": top_up.battery.serial,
        "done_at": top_up.done_at,
        "done_by": top_up.done_by.get_username(),
        "volume_ml": float(top_up.volume_ml),
        "volume_entered": top_up.volume_entered,
        "before_charge": top_up.before_charge,
        "water_type": top_up.water_type,
        "notes": top_up.notes,
        "recorded_at": top_up.recorded_at,
    }


def stored_top_up(pk):
    return WaterTopUp.objects.select_related("battery", "done_by").get(pk=pk)


def _summary(inspection):
    if inspection is None:
        return None
    return {
        "id": inspection.pk, "taken_at": inspection.taken_at, "situation": inspection.situation,
        "scope": inspection.scope, "soc_percent": _float(inspection.soc_percent), "soc_basis": inspection.soc_basis,
        "sg_mean": _float(inspection.sg_mean), "sg_spread": _float(inspection.sg_spread),
        "lowest_position": inspection.lowest_position, "volts_total": _float(inspection.volts_total),
    }


def open_findings(battery):
    """The battery's active findings, most severe first."""
    return [
        {"id": f.pk, "kind": f.kind, "title": f.get_kind_display(), "state": f.state, "severity": f.severity,
         "positions": list(f.positions or []), "opened_at": f.opened_at, "summary": f.summary}
        for f in Finding.objects.active().filter(battery=battery).order_by("-severity", "-opened_at")
    ]


def next_work_due(battery):
    """The battery's work as the planner has it due."""
    return [
        {key: item[key] for key in ("kind", "title", "due", "due_day", "days_overdue")}
        for item in work_due_for_battery(battery)
    ]


def battery_status(battery: Battery):
    """Latest state of charge, latest spread, open findings and planned work for one battery."""
    kept = BatteryState.objects.filter(battery=battery).select_related(
        "latest_inspection", "all_cells_inspection").first()
    latest = kept and kept.latest_inspection
    latest_all = kept and kept.all_cells_inspection
    last_top_up = kept and kept.watered_at
    findings = open_findings(battery)
    return {
        "battery": battery.pk,
        "serial": battery.serial,
        "status": battery.status,
        "latest": _summary(latest),
        "latest_all_cells": _summary(latest_all),
        "last_top_up": last_top_up,
        "open_findings": findings,
        "next_work_due": next_work_due(battery),
    }


def offline_pages(user):
    """The crew's screens a tablet keeps: today's work per site, the find and scan pages, and every active
    battery's entry screens (all cells or block voltages, pilot cell, water and equalizing where it takes them)."""
    pages = [reverse("readings:find"), reverse("labels:scan"), reverse("tablet:offline"), reverse("tablet:outbox"),
             reverse("api:batteries")]
    pages += [reverse("planner:today", args=[code]) for code in visible_sites(user).values_list("code", flat=True)]
    for battery in visible_batteries(user).active().select_related("profile").order_by("serial"):
        inspect = reverse("readings:inspect", args=[battery.pk])
        pages.append(inspect)
        if not battery.profile.reads_by_block:
            pages.append(f"{inspect}?scope=pilot")
        if battery.profile.watering_allowed:
            pages.append(reverse("readings:top_up", args=[battery.pk]))
        if battery.profile.equalizing_allowed:
            pages.append(reverse("planner:equalizing", args=[battery.pk]))
    return pages


OFFLINE_ASSETS = (
    "vendor/bootstrap/bootstrap.min.css", "vendor/bootstrap/bootstrap.bundle.min.js", "css/fleetcare.css",
    "js/entry.js", "js/rules.js", "js/offline.js", "js/scan.js", "vendor/jsqr/jsQR.js", "manifest.webmanifest", "icons/fleetcare-192.png", "icons/fleetcare-512.png",
)


def offline_assets():
    return [static(name) for name in OFFLINE_ASSETS]

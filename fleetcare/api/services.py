"""Submissions through the API: the tablet forms' own validation, then the readings services.

Each returns (status, body). A client UUID already stored answers with that stored record, whatever
happened since (the battery retired, the form changed): the first answer is the answer.
"""
import hashlib
import json

from fleetcare.api import selectors
from fleetcare.fleet.models import Battery
from fleetcare.fleet.site_time import site_clock
from fleetcare.readings.forms import InspectionForm, TopUpForm
from fleetcare.readings.models import Inspection, WaterTopUp
from fleetcare.readings.services import record_inspection, record_top_up

NOT_SAVED = "Nothing was saved: fix the fields listed and send again."


def _text(value):
    """A JSON value as the form would get it typed: 265 (a whole number) is "265", not "265.0"."""
    if value is None:
        return ""
    if isinstance(value, float) and value.is_integer():
        return str(int(value))
    return str(value)


def _rejected(status, detail, errors):
    return status, {"detail": detail, "errors": errors}


def body_digest(payload):
    """SHA-256 of a submission as parsed: a resend of the same body has the same digest."""
    canonical = json.dumps(payload.model_dump(mode="json"), sort_keys=True, separators=(",", ":"))
    return hashlib.sha256(canonical.encode("utf-8")).hexdigest()


def _replay_or_conflict(existing, battery, what, digest=None):
    if digest is not None and existing.client_digest and existing.client_digest != digest:
        return _rejected(409, f"This client_uuid was already used for another {what}: nothing was saved.", {
            "client_uuid": [f"Already used for a {what} with other values: make a new one for this {what}."],
        })
    if existing.battery_id != battery.pk:
        return _rejected(409, f"This client_uuid was already used for a {what} of another battery.", {
            "client_uuid": [f"Already used for a {what} of another battery: make a new one for this {what}."],
        })
    return None


def _retired(battery, what):
    if battery.status == Battery.Status.RETIRED:
        message = f"{battery.serial} was retired: it takes no more {what}. Check the serial number."
        return _rejected(409, message, {"__all__": [message]})
    return None


def inspection_form_data(payload, profile):
    """The tablet form's POST data for a JSON inspection, and errors the form cannot see (unknown cells)."""
    data = {
        "client_uuid": str(payload.client_uuid), "situation": payload.situation, "scope": payload.scope,
        "taken_at": payload.taken_at, "temp": _text(payload.temp),
        "hours_since_charge": _text(payload.hours_since_charge), "notes": payload.notes,
    }
    if payload.hydrometer_compensated:
        data["hydrometer_compensated"] = "on"
    errors, seen = [], set()
    unit = "block" if profile.reads_by_block else "cell"
    for cell in payload.cells:
        p = cell.position
        if p > profile.positions:
            errors.append(f"There is no {unit} {p}: this battery has {profile.positions} {unit}s. "
                          "Check that this is the right battery.")
            continue
        if p in seen:
            errors.append(f"{unit.capitalize()} {p} is sent twice.")
            continue
        seen.add(p)
        if profile.reads_by_block:
            if cell.sg is not None:
                errors.append(f"Block {p}: sealed blocks are read by voltage (volts), not SG.")
            data[f"volts_{p}"] = _text(cell.volts)
        else:
            if cell.volts is not None:
                errors.append(f"Cell {p}: send the SG (sg); cell voltages are not taken here.")
            data[f"sg_{p}"] = _text(cell.sg)
            if cell.low:
                data[f"low_{p}"] = "on"
            if cell.confirmed:
                data[f"confirm_{p}"] = "on"
    return data, ({"cells": errors} if errors else {})


def submit_inspection(*, user, battery, payload):
    digest = body_digest(payload)
    existing = Inspection.objects.filter(client_uuid=payload.client_uuid).first()
    if existing is not None:
        return _replay_or_conflict(existing, battery, "reading", digest) or (201, selectors.inspection_row(
            selectors.stored_inspection(existing.pk)))
    refused = _retired(battery, "readings")
    if refused:
        return refused
    data, extra_errors = inspection_form_data(payload, battery.profile)
    with site_clock(battery):
        form = InspectionForm(data, battery=battery)
        valid = form.is_valid()
    if not valid or extra_errors:
        errors = {name: list(messages) for name, messages in form.errors.items()}
        errors.update(extra_errors)
        return _rejected(422, NOT_SAVED, errors)
    chosen_via = payload.chosen_via or Inspection.ChosenVia.API
    inspection, created = record_inspection(battery=battery, user=user, chosen_via=chosen_via, client_digest=digest,
                                            **form.record_kwargs())
    if not created:
        refused = _replay_or_conflict(inspection, battery, "reading", digest)
        if refused:
            return refused
    return 201, selectors.inspection_row(selectors.stored_inspection(inspection.pk))


def submit_top_up(*, user, battery, payload):
    digest = body_digest(payload)
    existing = WaterTopUp.objects.filter(client_uuid=payload.client_uuid).first()
    if existing is not None:
        return _replay_or_conflict(existing, battery, "top-up", digest) or (201, selectors.top_up_row(
            selectors.stored_top_up(existing.pk)))
    refused = _retired(battery, "water")
    if refused:
        return refused
    data = {
        "client_uuid": str(payload.client_uuid), "done_at": payload.done_at, "volume": _text(payload.volume),
        "water_type": payload.water_type, "notes": payload.notes,
    }
    if payload.per_cell:
        data["per_cell"] = "on"
    if payload.before_charge:
        data["before_charge"] = "on"
    with site_clock(battery):
        form = TopUpForm(data, battery=battery)
        valid = form.is_valid()
    if not valid:
        return _rejected(422, NOT_SAVED, {name: list(messages) for name, messages in form.errors.items()})
    clean = form.cleaned_data
    top_up, created = record_top_up(
        battery=battery, user=user, done_at=clean["done_at"], volume_ml=clean["volume_ml"],
        volume_entered=clean["volume_entered"], before_charge=clean["before_charge"],
        water_type=clean["water_type"], notes=clean["notes"], client_uuid=clean["client_uuid"], client_digest=digest,
    )
    if not created:
        refused = _replay_or_conflict(top_up, battery, "top-up", digest)
        if refused:
            return refused
    return 201, selectors.top_up_row(selectors.stored_top_up(top_up.pk))

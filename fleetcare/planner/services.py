"""Writes: equalizing charges and their readings, skipped tasks, the calendar feed's secret."""
from decimal import Decimal

from django.db import IntegrityError, transaction
from django.utils import timezone

from fleetcare.care import detection
from fleetcare.planner.models import EqualizingCharge, EqualizingReading, SiteSettings, TaskSkip, new_feed_token
from fleetcare.readings.services import corrected_cell_sg

SG_PLACES = Decimal("0.001")


class NotAllowed(Exception):
    pass


def start_charge(*, battery, user, started_at, notes="", client_uuid=None):
    """(charge, created). One running charge per battery; the same form sent twice stores one."""
    if not battery.profile.equalizing_allowed:
        raise NotAllowed("This battery's profile does not allow equalizing charges (sealed batteries, unless the maker allows it).")
    if client_uuid is not None:
        existing = EqualizingCharge.objects.filter(client_uuid=client_uuid).first()
        if existing is not None:
            return existing, False
    running = EqualizingCharge.objects.running().filter(battery=battery).first()
    if running is not None:
        return running, False
    kwargs = {"client_uuid": client_uuid} if client_uuid is not None else {}
    try:
        with transaction.atomic():
            return EqualizingCharge.objects.create(battery=battery, by=user, started_at=started_at, notes=notes, **kwargs), True
    except IntegrityError:
        return EqualizingCharge.objects.running().get(battery=battery), False


def add_reading(*, charge, taken_at, sg, temp_c=None, volts=None, basis=EqualizingReading.Basis.PILOT, client_uuid=None):
    """Store one reading taken during the charge, with its SG corrected to the profile's reference temperature."""
    if client_uuid is not None:
        existing = EqualizingReading.objects.filter(client_uuid=client_uuid).first()
        if existing is not None:
            return existing, False
    profile = charge.battery.profile
    corrected = corrected_cell_sg(profile, sg, temp_c, compensated=False)
    kwargs = {"client_uuid": client_uuid} if client_uuid is not None else {}
    with transaction.atomic():
        reading = EqualizingReading.objects.create(
            charge=charge, taken_at=taken_at, sg=sg, temp_c=temp_c, volts=volts, basis=basis,
            sg_corrected=Decimal(str(corrected)).quantize(SG_PLACES), **kwargs,
        )
        if temp_c is not None:
            detection.redetect(charge.battery_id)  # a hot reading opens the hot-battery finding
    return reading, True


def end_charge(*, charge, ended_at=None, notes=""):
    with transaction.atomic():
        charge = EqualizingCharge.objects.select_for_update().get(pk=charge.pk)
        if charge.ended_at is None:
            charge.ended_at = max(ended_at or timezone.now(), charge.started_at)
            if notes:
                charge.notes = f"{charge.notes}\n{notes}".strip()
            charge.save(update_fields=["ended_at", "notes"])
    return charge


def skip_task(*, battery, kind, day, reason, user):
    with transaction.atomic():
        return TaskSkip.objects.create(battery=battery, kind=kind, day=day, reason=reason.strip(), by=user)


def site_settings(site):
    settings, _ = SiteSettings.objects.get_or_create(site=site)
    return settings


def regenerate_feed_token(site):
    """A new secret feed address; the old one stops working at once."""
    with transaction.atomic():
        settings = site_settings(site)
        settings.feed_token = new_feed_token()
        settings.save(update_fields=["feed_token"])
    return settings

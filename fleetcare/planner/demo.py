"""Planner demo data on top of the invented fleet (fleetcare.demo.fleet): room settings and a few equalizing charges.

All invented. The Harwick Road room has ten chargers but 180 m³/h of ventilation, less than ten 48 V
trays on normal charge need by IEC/EN 62485-3 at I_gas 2 (about 188 m³/h); the demo says six charge at
once overnight, which leaves room for one equalizing charge at a time. One tray finished an equalizing
charge early this morning and still needs its closing all-cell reading.
"""
import datetime as dt
from decimal import Decimal

from django.contrib.auth import get_user_model
from django.db import transaction
from django.utils import timezone

from fleetcare.fleet.models import Battery, ChargingRoom, Site
from fleetcare.planner.models import EqualizingCharge, EqualizingReading, RoomSettings, SiteSettings

JUST_FINISHED = "HRW-B03"
EARLIER = (("HRW-B01", 1), ("HRW-B05", 2), ("HRW-B09", 3), ("PSD-B02", 2))
# Corrected pilot-cell SG every 45 minutes: rising, then level over the last three (Kimberly's rule).
LEVELLING_SG = ("1.268", "1.276", "1.282", "1.286", "1.287", "1.287")


def load(now=None):
    """Add the planner demo data once; returns False when it is already there or the fleet demo is not loaded."""
    room = ChargingRoom.objects.filter(site__code="hrw", name="Charging room A").first()
    if room is None or RoomSettings.objects.filter(room=room).exists():
        return False
    now = now or timezone.now()
    crew = get_user_model().objects.filter(username="demo-crew").first()
    with transaction.atomic():
        RoomSettings.objects.create(room=room, charging_at_once=6,
                                    note="Demo (invented): at most six trays on normal charge at once overnight.")
        SiteSettings.objects.get_or_create(site=Site.objects.get(code="hrw"), defaults={"waterings_per_day": 8})
        batteries = {b.serial: b for b in Battery.objects.filter(serial__in=[JUST_FINISHED] + [s for s, _ in EARLIER])
                     .select_related("site", "profile")}
        for serial, days_ago in EARLIER:
            b = batteries[serial]
            start = _local(b, now.astimezone(b.site.tzinfo).date() - dt.timedelta(days=days_ago), dt.time(22, 0))
            EqualizingCharge.objects.create(battery=b, by=crew, started_at=start, ended_at=start + dt.timedelta(hours=3),
                                            notes="Demo record.")
        b = batteries[JUST_FINISHED]
        end = min(_local(b, now.astimezone(b.site.tzinfo).date(), dt.time(3, 30)), now - dt.timedelta(minutes=10))
        start = end - dt.timedelta(hours=5, minutes=30)
        charge = EqualizingCharge.objects.create(battery=b, by=crew, started_at=start, ended_at=end,
                                                 notes="Demo record: SG levelled, closing reading still to take.")
        for n, sg in enumerate(LEVELLING_SG):
            EqualizingReading.objects.create(charge=charge, taken_at=start + dt.timedelta(minutes=90 + 45 * n),
                                             basis=EqualizingReading.Basis.PILOT, sg=Decimal(sg), temp_c=Decimal("25.0"),
                                             sg_corrected=Decimal(sg), volts=Decimal("62.4"))
    return True


def _local(battery, day, at):
    return timezone.make_aware(dt.datetime.combine(day, at), battery.site.tzinfo)

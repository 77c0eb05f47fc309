"""An invented fleet for trying FleetCare: two warehouses and a care residence, with a year of readings.

Every company, place, person and serial here is made up. The figures are shaped by the field notes
(SG bands, water use by Faraday's law) so that the stories in the data look like the real thing:
a tray with a weakening cell, a spare left discharged, a truck whose night shift runs batteries
flat, a charger that overcharges (heavy water use) and a wheelchair pair with a weak block.
"""
import random
from datetime import datetime, time, timedelta
from decimal import Decimal

from django.contrib.auth import get_user_model
from django.db import transaction
from django.utils import timezone

from fleetcare import chemistry
from fleetcare.accounts.roles import ADMINISTRATOR, CREW, MANAGER, SUPERVISOR, ensure_groups
from fleetcare.fleet import site_units
from fleetcare.fleet.models import Battery, BatteryProfile, ChargingRoom, Fitting, ShiftWindow, Site, Vehicle
from fleetcare.readings import state
from fleetcare.readings.models import CellReading, Inspection, WaterTopUp
from fleetcare.readings.services import CellEntry, build_cells, summarise

DEMO_PASSWORD = "try-fleetcare-2026"
DEMO_USERS = (
    ("demo-crew", "Robin", "Adeyemi", CREW),
    ("demo-supervisor", "Sam", "Okafor", SUPERVISOR),
    ("demo-manager", "Alex", "Lindqvist", MANAGER),
    ("demo-admin", "Jo", "Marchetti", ADMINISTRATOR),
)
HISTORY_DAYS = 400
WEAK = "HRW-B07"
LEFT_FLAT = "HRW-B14"
THIRSTY = "PSD-B03"
NIGHT_TRUCK = "HRW-FL04"
WEAK_CHAIR = "ELM-C05"


def load(today=None, seed=2026):
    """Create the demo fleet once. Returns False if it was already there."""
    if Site.objects.filter(code="hrw").exists():
        _ensure_users()
        return False
    today = today or timezone.localdate()
    rng = random.Random(seed)
    with transaction.atomic():
        users = _ensure_users()
        sites, profiles = _fleet()
        crew = users["demo-crew"]
        for site in sites.values():
            site.members.add(*users.values())
        _history(rng, today, crew)
    return True


def _ensure_users():
    groups = ensure_groups()
    User = get_user_model()
    users = {}
    for username, first, last, role in DEMO_USERS:
        user, created = User.objects.get_or_create(username=username, defaults={"first_name": first, "last_name": last})
        if created:
            user.set_password(DEMO_PASSWORD)
            user.is_staff = role == ADMINISTRATOR
            user.is_superuser = role == ADMINISTRATOR
            user.save()
        user.groups.add(groups[role])
        users[username] = user
    return users


def _fleet():
    hrw = Site.objects.create(name="Harwick Road warehouse", code="hrw", kind=Site.Kind.WAREHOUSE,
                              timezone="Europe/London", charges_per_day=Decimal("1.6"), spares_reserve=1)
    psd = Site.objects.create(name="Pellow Street depot", code="psd", kind=Site.Kind.WAREHOUSE,
                              timezone="America/Chicago", temp_unit=Site.TempUnit.FAHRENHEIT,
                              volume_unit=Site.VolumeUnit.US_FL_OZ, charges_per_day=Decimal("1.0"), spares_reserve=0)
    elm = Site.objects.create(name="Elmstead House care residence", code="elm", kind=Site.Kind.CARE_HOME,
                              timezone="Europe/London", charges_per_day=Decimal("1.0"))
    for site, windows in ((hrw, [("Between shifts", "05:30", 1.5), ("Night", "22:00", 7)]),
                          (psd, [("Night", "20:00", 10)]), (elm, [("Overnight", "21:00", 9)])):
        for name, start, hours in windows:
            ShiftWindow.objects.create(site=site, name=name, starts_at=time.fromisoformat(start), hours=Decimal(str(hours)))
    rooms = {
        "hrw": ChargingRoom.objects.create(site=hrw, name="Charging room A", chargers=10, equalizing_chargers=4, airflow_m3h=Decimal("400")),
        "psd": ChargingRoom.objects.create(site=psd, name="Battery bay", chargers=6, equalizing_chargers=2, airflow_m3h=Decimal("200")),
    }
    p48 = BatteryProfile.objects.create(
        name="48 V 24-cell 775 Ah flooded", maker="Demo maker", technology="flooded", application="traction",
        nominal_voltage=48, monoblocks=1, cells_per_block=24, capacity_ah=775, capacity_hour_rate=5,
        full_charge_sg=Decimal("1.290"), discharged_sg=Decimal("1.140"), design_life_years=5, design_cycles=1500,
        unit_price=Decimal("7850"), weight_kg=Decimal("1350"))
    p24 = BatteryProfile.objects.create(
        name="24 V 12-cell 620 Ah flooded", maker="Demo maker", technology="flooded", application="traction",
        nominal_voltage=24, monoblocks=1, cells_per_block=12, capacity_ah=620, capacity_hour_rate=5,
        full_charge_sg=Decimal("1.280"), discharged_sg=Decimal("1.130"), design_life_years=5, design_cycles=1200,
        unit_price=Decimal("3400"), weight_kg=Decimal("520"))
    pagm = BatteryProfile.objects.create(
        name="24 V pair of 12 V 60 Ah AGM blocks", maker="Demo maker", technology="agm", application="mobility",
        nominal_voltage=24, monoblocks=2, cells_per_block=6, capacity_ah=60, capacity_hour_rate=20,
        watering_allowed=False, equalizing_allowed=False, design_life_years=2, design_cycles=800,
        unit_price=Decimal("310"), weight_kg=Decimal("42"), ocv_rest_hours=Decimal("4"))
    profiles = {"p48": p48, "p24": p24, "agm": pagm}
    since = timezone.localdate() - timedelta(days=HISTORY_DAYS + 30)

    def battery(serial, profile, site, room=None, status=Battery.Status.IN_SERVICE, years_old=None):
        start = since if years_old is None else timezone.localdate() - timedelta(days=int(365 * years_old))
        return Battery.objects.create(serial=serial, profile=profile, site=site, charging_room=room,
                                      in_service_date=start, status=status, pilot_cell=rng_pilot(serial, profile))

    fitted_at = timezone.make_aware(datetime.combine(since, time(6, 0)))
    for n in range(1, 7):  # six counterbalance forklifts, two batteries each (day and night shift)
        truck = Vehicle.objects.create(asset_number=f"HRW-FL{n:02d}", kind=Vehicle.Kind.COUNTERBALANCE, site=hrw,
                                       description="2.5 t counterbalance, 48 V")
        for shift, offset in (("Day", 0), ("Night", 6)):
            b = battery(f"HRW-B{n + offset:02d}", p48, hrw, rooms["hrw"], years_old=5.6 if n == 1 else None)
            Fitting.objects.create(battery=b, vehicle=truck, fitted_at=fitted_at, shift=shift)
    for n in range(13, 16):
        battery(f"HRW-B{n:02d}", p48, hrw, rooms["hrw"], status=Battery.Status.SPARE)
    for n in range(1, 5):  # pallet trucks, one battery each
        truck = Vehicle.objects.create(asset_number=f"HRW-PT{n:02d}", kind=Vehicle.Kind.PALLET, site=hrw)
        b = battery(f"HRW-P{n:02d}", p24, hrw, rooms["hrw"])
        Fitting.objects.create(battery=b, vehicle=truck, fitted_at=fitted_at)
    for n in range(1, 5):  # reach trucks at the depot
        truck = Vehicle.objects.create(asset_number=f"PSD-RT{n:02d}", kind=Vehicle.Kind.REACH, site=psd)
        b = battery(f"PSD-B{n:02d}", p48, psd, rooms["psd"])
        Fitting.objects.create(battery=b, vehicle=truck, fitted_at=fitted_at)
    battery("PSD-B05", p48, psd, rooms["psd"], status=Battery.Status.SPARE)
    for n in range(1, 13):  # a dozen wheelchairs, one AGM pair each
        chair = Vehicle.objects.create(asset_number=f"ELM-C{n:02d}", kind=Vehicle.Kind.WHEELCHAIR, site=elm,
                                       description=f"Resident chair {n}")
        b = battery(f"ELM-P{n:02d}", pagm, elm, years_old=rng_age(n))
        Fitting.objects.create(battery=b, vehicle=chair, fitted_at=fitted_at)
    return {"hrw": hrw, "psd": psd, "elm": elm}, profiles


def rng_pilot(serial, profile):
    return 1 if not profile.is_flooded else (sum(map(ord, serial)) % profile.cell_count) + 1


def rng_age(n):
    return 0.5 + (n * 7 % 12) / 6  # between six months and 2.5 years


def _history(rng, today, crew):
    batteries = list(Battery.objects.select_related("profile", "site").prefetch_related("fittings__vehicle"))
    inspections, cells_per, top_ups = [], [], []
    for b in batteries:
        if b.profile.is_flooded:
            _flooded_history(rng, today, crew, b, inspections, cells_per, top_ups)
        else:
            _sealed_history(rng, today, crew, b, inspections, cells_per)
    Inspection.objects.bulk_create(inspections, batch_size=500)
    rows = []
    for inspection, cells in zip(inspections, cells_per):
        for cell in cells:
            cell.inspection = inspection
        rows.extend(cells)
    CellReading.objects.bulk_create(rows, batch_size=2000)
    WaterTopUp.objects.bulk_create(top_ups, batch_size=500)
    state.rebuild([b.pk for b in batteries])


def _at(b, day, hour, minute=0):
    return timezone.make_aware(datetime.combine(day, time(hour, minute)), b.site.tzinfo)


def _inspection(b, crew, when, situation, entries, temp_c, scope=Inspection.Scope.ALL_CELLS, hours=None):
    inspection = Inspection(battery=b, taken_by=crew, taken_at=when, situation=situation, scope=scope,
                            temp_c=Decimal(str(temp_c)), hours_since_charge=hours)
    cells = build_cells(inspection, entries)
    summarise(inspection, cells)
    return inspection, cells


def _observed(true_sg_at_ref, temp_c, profile):
    """What a hydrometer shows at temp_c for a cell whose SG at the reference temperature is known."""
    ref = float(profile.sg_reference_temp_c)
    coef = float(profile.sg_coefficient_per_c)
    return Decimal(str(round(true_sg_at_ref - coef * (temp_c - ref), 3)))


def _flooded_history(rng, today, crew, b, inspections, cells_per, top_ups):
    profile = b.profile
    full = float(profile.full_charge_sg)
    low = float(profile.discharged_sg)
    n = profile.cell_count
    offsets = [rng.gauss(0, 0.004) for _ in range(n)]
    weak_cell = 9
    asset = next((f.vehicle.asset_number for f in b.fittings.all()), "")
    start = max(b.in_service_date, today - timedelta(days=HISTORY_DAYS))
    day = start
    while day < today:
        age_days = (today - day).days
        temp = round(rng.uniform(20, 31) if b.site.code == "hrw" else rng.uniform(18, 34), 1)
        shortfall = 0.006 if (today - b.in_service_date).days > 5 * 365 else 0.0
        if day.weekday() == 0:  # Monday: all-cell reading after the weekend charge
            entries = []
            for cell in range(1, n + 1):
                sg = full - shortfall + offsets[cell - 1] + rng.gauss(0, 0.002)
                if b.serial == WEAK and cell == weak_cell and age_days < 120:
                    sg -= 0.012 + (120 - age_days) * 0.0004
                level = "low" if rng.random() < 0.01 else "ok"
                entries.append(CellEntry(position=cell, sg=_observed(sg, temp, profile), level=level))
            situation = Inspection.Situation.JUST_EQUALIZED  # the weekend charge ends with an equalizing charge
            if b.serial == LEFT_FLAT and age_days < 40:
                pass  # the forgotten spare: nobody charged or read it properly for weeks
            else:
                i, c = _inspection(b, crew, _at(b, day, 6, 10), situation, entries, temp)
                inspections.append(i)
                cells_per.append(c)
        depth = rng.uniform(0.45, 0.75)
        if asset == NIGHT_TRUCK and b.serial.endswith(("10",)):
            depth = rng.uniform(0.85, 0.95)
        if b.serial == LEFT_FLAT and age_days < 40:
            depth = 0.62 + (40 - age_days) * 0.002
            situation, hours = Inspection.Situation.RESTED, 24
        else:
            situation, hours = Inspection.Situation.BEFORE_CHARGE, None
        if day.weekday() in (1, 3) or (b.serial == LEFT_FLAT and age_days < 40 and day.weekday() == 2):
            pilot_sg = full - (full - low) * depth + offsets[b.pilot_cell - 1]
            entry = CellEntry(position=b.pilot_cell, sg=_observed(pilot_sg, temp, profile), level="ok")
            i, c = _inspection(b, crew, _at(b, day, 21, 30), situation, [entry], temp, Inspection.Scope.PILOT, hours)
            inspections.append(i)
            cells_per.append(c)
        if day.weekday() == 4 and profile.watering_allowed and not (b.serial == LEFT_FLAT and age_days < 40):
            charges = 7 * float(b.site.charges_per_day)
            overcharge_ah = 0.12 * float(profile.capacity_ah) * 0.6 * charges
            if b.serial == THIRSTY:
                overcharge_ah *= 2.4
            ml_per_cell = chemistry.electrolysis_water_g(overcharge_ah) * rng.uniform(0.85, 1.15)
            ml = Decimal(str(round(ml_per_cell * n, -1)))
            top_ups.append(WaterTopUp(battery=b, done_by=crew, done_at=_at(b, day, 7, 30), volume_ml=ml,
                                      volume_entered=f"{site_units.volume_shown(ml, b)} {site_units.volume_label(b)}",
                                      water_type=WaterTopUp.WaterType.DEIONISED))
        day += timedelta(days=1)


def _sealed_history(rng, today, crew, b, inspections, cells_per):
    profile = b.profile
    start = max(b.in_service_date, today - timedelta(days=HISTORY_DAYS))
    day = start + timedelta(days=(7 - start.weekday()) % 7)
    chair = next((f.vehicle.asset_number for f in b.fittings.all()), "")
    while day < today:
        age = (today - day).days
        entries = []
        for block in range(1, profile.monoblocks + 1):
            volts = rng.uniform(12.74, 12.82)  # a matched pair rests within a few hundredths of a volt
            if chair == WEAK_CHAIR and block == 2 and age < 90:
                volts -= 0.12 + (90 - age) * 0.003
            entries.append(CellEntry(position=block, volts=Decimal(str(round(volts, 2)))))
        i, c = _inspection(b, crew, _at(b, day, 8, 0), Inspection.Situation.RESTED, entries, 21.0, hours=Decimal("10"))
        inspections.append(i)
        cells_per.append(c)
        day += timedelta(days=14)

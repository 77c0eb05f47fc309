"""From the database to the planner's plain data (fleetcare.planner.solver), for many sites in a fixed number of queries.

Airflow: the room's baseline is the normal-charging airflow of as many of its batteries as can charge
at once (every charger unless the room's settings say fewer; the largest batteries, so it is never an
underestimate), at the normal gassing current. A battery that equalizes takes one of those chargers,
so the planner adds only what equalizing needs beyond its normal charge:
ventilation_airflow_m3h(cells, I_gas equalizing - I_gas normal, capacity). IEC/EN 62485-3's formula is
linear in I_gas, so that difference is exact.
"""
import datetime as dt
import hashlib
from collections import defaultdict
from dataclasses import dataclass, field

from django.db.models import Count, F, Max, Q
from django.db.models.functions import Coalesce

from fleetcare import chemistry
from fleetcare.planner import due, solver
from fleetcare.care.models import Finding
from fleetcare.fleet.models import Battery, ChargingRoom, Fitting, ShiftWindow
from fleetcare.planner import policy as planner_policy
from fleetcare.planner.models import EqualizingCharge, Policy, SiteSettings
from fleetcare.readings.models import BatteryState, Inspection

PLANNED_STATUSES = due.CARED_FOR_STATUSES
PLANNER_FINDINGS = ("high_spread", "sulfation", "low_level")
CHARGE_WINDOW_DAYS = due.CHARGE_WINDOW_DAYS
INPUTS_VERSION = "1"


@dataclass
class CareRecord:
    """One battery's care so far (last equalized, watered, read), what care it may have, its settings and
    airflow: what the Django side knows beyond the planner's view of it."""

    battery: Battery
    settings: planner_policy.Resolved
    can_equalize: bool
    can_water: bool
    last_equalized: dt.date | None = None
    last_watered: dt.date | None = None
    last_all_cells: dt.date | None = None
    last_reading: dt.date | None = None
    equalizing_ended_at: dt.datetime | None = None
    equalized_at: dt.datetime | None = None
    equalizing_now: bool = False
    watered_at: dt.datetime | None = None
    all_cells_at: dt.datetime | None = None
    vehicle: str = ""
    normal_airflow_m3h: float = 0.0
    equalize_airflow_m3h: float = 0.0


@dataclass
class RoomLoad:
    """A charging room's everyday load: batteries charging at once, their airflow, and where that figure came from."""

    room: ChargingRoom
    charging_at_once: int
    baseline_airflow_m3h: float
    baseline_source: str


@dataclass
class SiteInputs:
    site: object
    today: dt.date
    inputs: solver.PlanInputs | None
    facts: dict = field(default_factory=dict)  # battery pk -> CareRecord
    rooms: dict = field(default_factory=dict)  # room pk -> RoomLoad
    windows: list = field(default_factory=list)  # ShiftWindow rows
    settings: SiteSettings | None = None
    problem: str = ""
    notes: list = field(default_factory=list)

    @property
    def fingerprint(self):
        return hashlib.sha256(f"{INPUTS_VERSION}|{self.inputs!r}".encode()).hexdigest()


def site_today(site, now):
    return now.astimezone(site.tzinfo).date()


def _local_date(value, site):
    return None if value is None else value.astimezone(site.tzinfo).date()


def build(sites, now, days):
    """{site pk: SiteInputs} for the plan of `days` days from each site's today."""
    sites = list(sites)
    site_ids = [s.pk for s in sites]
    by_site = {s.pk: s for s in sites}
    windows = defaultdict(list)
    for w in ShiftWindow.objects.filter(site__in=site_ids).order_by("starts_at"):
        windows[w.site_id].append(w)
    rooms = list(ChargingRoom.objects.filter(site__in=site_ids).select_related("planner_settings"))
    batteries = list(
        Battery.objects.filter(site__in=site_ids, status__in=PLANNED_STATUSES).select_related("profile").order_by("serial")
    )
    spares = defaultdict(int)
    for b in batteries:
        if b.status == Battery.Status.SPARE:
            spares[b.site_id] += 1
    policies = list(Policy.objects.filter(Q(site__in=site_ids) | Q(site__isnull=True)).select_related("site", "profile"))
    site_settings = {s.site_id: s for s in SiteSettings.objects.filter(site__in=site_ids)}
    ids = [b.pk for b in batteries]
    findings = defaultdict(list)
    for row in Finding.objects.active().filter(battery__in=ids, kind__in=PLANNER_FINDINGS).order_by("pk"):
        findings[row.battery_id].append(row)
    charges = {
        row["battery"]: row for row in EqualizingCharge.objects.filter(battery__in=ids).values("battery").annotate(
            last=Max(Coalesce("ended_at", "started_at")), last_end=Max("ended_at"),
            running=Count("pk", filter=Q(ended_at__isnull=True)))
    }
    # Each battery's kept state (readings.state): its latest readings and top-up, without reading its history.
    readings = {
        row["battery"]: row for row in BatteryState.objects.filter(battery__in=ids).values(
            "battery", "watered_at", last_equalized=F("equalized_at"), last_all=F("all_cells_at"), last_any=F("latest_at"),
        )
    }
    since = now - dt.timedelta(days=CHARGE_WINDOW_DAYS)
    logged = defaultdict(list)
    for battery_id, taken_at in Inspection.objects.current().post_charge().filter(
        battery__in=ids, taken_at__gte=since
    ).values_list("battery", "taken_at"):
        logged[battery_id].append(taken_at)
    watered = {battery_id: row["watered_at"] for battery_id, row in readings.items() if row["watered_at"]}
    vehicles = dict(
        Fitting.objects.filter(battery__in=ids, removed_at__isnull=True).values_list("battery", "vehicle__asset_number")
    )

    out = {}
    for site in sites:
        today = site_today(site, now)
        out[site.pk] = SiteInputs(site=site, today=today, inputs=None, windows=windows[site.pk],
                                  settings=site_settings.get(site.pk))
    facts_by_site = defaultdict(list)
    for b in batteries:
        site = by_site[b.site_id]
        facts = _facts(b, site, policies, charges.get(b.pk), readings.get(b.pk), watered.get(b.pk), vehicles.get(b.pk, ""))
        out[site.pk].facts[b.pk] = facts
        facts_by_site[site.pk].append(facts)
    for room in rooms:
        members = [f for f in facts_by_site[room.site_id] if f.battery.charging_room_id == room.pk]
        out[room.site_id].rooms[room.pk] = _room_facts(room, members)
    for site in sites:
        entry = out[site.pk]
        if not entry.windows:
            entry.problem = "No shift windows are set for this site, so nothing can be planned (ask an administrator)."
            continue
        clipped, entry.notes = clip_windows(entry.windows)
        cares = []
        for facts in facts_by_site[site.pk]:
            care = _battery_care(facts, site, findings.get(facts.battery.pk, ()), logged.get(facts.battery.pk, []), now)
            if care is not None:
                cares.append(care)
        entry.inputs = solver.PlanInputs(
            site_id=site.pk,
            start_date=entry.today,
            days=days,
            shift_windows=tuple(solver.DailyWindow(w.starts_at, hours) for w, hours in clipped),
            rooms=tuple(
                solver.RoomLimits(room_id=r.room.pk, equalize_chargers=r.room.equalizing_chargers,
                                      airflow_m3h=float(r.room.airflow_m3h),
                                      baseline_airflow_m3h=round(r.baseline_airflow_m3h, 3), name=r.room.name)
                for r in sorted(entry.rooms.values(), key=lambda r: r.room.pk)
            ),
            batteries=tuple(cares),
            spares_available=spares[site.pk],
            spares_reserve=site.spares_reserve,
            waterings_per_day=entry.settings.waterings_per_day if entry.settings else None,
        )
    return out


def clip_windows(windows):
    """[(window, hours)] with each window cut short where it would run into the next one (the planner needs
    windows that do not overlap; cutting only ever shortens them), and a note for each cut."""
    ordered = sorted(windows, key=lambda w: w.starts_at)
    out, notes = [], []
    for i, window in enumerate(ordered):
        hours = float(window.hours)
        if len(ordered) > 1:
            following = ordered[(i + 1) % len(ordered)]
            start = window.starts_at.hour * 60 + window.starts_at.minute
            gap = following.starts_at.hour * 60 + following.starts_at.minute - start
            gap = gap if gap > 0 else gap + 24 * 60
            if hours * 60 > gap:
                notes.append(f"{window.name} ({window.starts_at:%H:%M}, {float(window.hours):g} h) runs into "
                             f"{following.name} at {following.starts_at:%H:%M}: planned as {gap / 60:g} h.")
                hours = gap / 60
        out.append((window, hours))
    return out, notes


def _facts(battery, site, policies, charge, reading, watered_at, vehicle):
    profile = battery.profile
    settings = planner_policy.resolve(site.pk, profile.pk, policies)
    facts = CareRecord(
        battery=battery, settings=settings,
        can_equalize=due.takes_equalizing(profile),
        can_water=due.takes_water(profile),
        vehicle=vehicle or "",
    )
    equalized = [charge and charge["last"], reading and reading["last_equalized"]]
    equalized = [t for t in equalized if t]
    facts.equalized_at = max(equalized) if equalized else None
    facts.last_equalized = _local_date(facts.equalized_at, site)
    facts.watered_at = watered_at
    facts.equalizing_ended_at = charge and charge["last_end"]
    facts.equalizing_now = bool(charge and charge["running"])
    facts.last_watered = _local_date(watered_at, site)
    if reading:
        facts.all_cells_at = reading["last_all"]
        facts.last_all_cells = _local_date(reading["last_all"], site)
        facts.last_reading = _local_date(reading["last_any"], site)
    cells, capacity = profile.cell_count, float(profile.capacity_ah)
    normal = float(settings.charge_gas_current)
    extra = max(0.0, float(settings.equalize_gas_current) - normal)
    facts.normal_airflow_m3h = chemistry.ventilation_airflow_m3h(cells, normal, capacity)
    facts.equalize_airflow_m3h = chemistry.ventilation_airflow_m3h(cells, extra, capacity)
    return facts


def _room_facts(room, members):
    settings = getattr(room, "planner_settings", None)
    at_once = room.chargers
    if settings is not None and settings.charging_at_once is not None:
        at_once = settings.charging_at_once
    if settings is not None and settings.baseline_airflow_m3h is not None:
        return RoomLoad(room, at_once, float(settings.baseline_airflow_m3h), "set for this room")
    loads = sorted((f.normal_airflow_m3h for f in members), reverse=True)[:at_once]
    source = (f"normal charging of the {len(loads)} largest of the room's batteries "
              f"({'every charger' if settings is None or settings.charging_at_once is None else 'set for this room'})")
    return RoomLoad(room, at_once, sum(loads), source)


def logged_dates(logged_times, site):
    """The local dates of the post-charge readings logged in the last CHARGE_WINDOW_DAYS days."""
    return [_local_date(t, site) for t in logged_times]


def schedule_of(facts, site, logged_times, now):
    """The battery's equalizing and watering schedule (fleetcare.planner.due) from its settings and charges."""
    return due.schedule(facts.settings, facts.can_equalize, facts.can_water, logged_dates(logged_times, site),
                        facts.last_equalized, site_today(site, now), site.charges_per_day)


def acted_on(finding, facts):
    """A finding already answered by an equalizing charge (or a top-up) after it was last seen: the next
    reading decides whether it stays, so it does not ask for the same work again meanwhile."""
    if finding.kind in solver.WATER_FINDINGS:
        done_at = facts.watered_at
    elif facts.equalizing_now:
        return True
    else:
        done_at = facts.equalized_at
    return done_at is not None and done_at > finding.last_seen_at


def _battery_care(facts, site, findings, logged_times, now):
    settings = facts.settings
    if not facts.can_equalize and not facts.can_water:
        return None
    sched = schedule_of(facts, site, logged_times, now)
    kinds = set()
    if facts.can_equalize:
        kinds |= set(solver.EQUALIZE_FINDINGS)
    if facts.can_water:
        kinds |= set(solver.WATER_FINDINGS)
    battery = facts.battery
    return solver.BatteryCare(
        battery_id=battery.pk,
        serial=battery.serial,
        room_id=battery.charging_room_id,
        airflow_m3h=round(facts.equalize_airflow_m3h, 3),
        equalize_hours=max(0.5, float(settings.equalize_hours)),
        equalize_every_days=sched.equalize_every_days,
        equalize_every_charges=sched.equalize_every_charges,
        charges_per_day=sched.charges_per_day,
        charges_since_equalize=sched.charges_since_equalize,
        last_equalized=facts.last_equalized,
        water_every_days=sched.water_every_days,
        last_watered=facts.last_watered,
        watering_minutes=float(settings.watering_minutes),
        findings=tuple(
            solver.FindingInput(kind=f.kind, severity=int(f.severity), note=" ".join((f.summary or "").split()))
            for f in findings if f.kind in kinds and not acted_on(f, facts)
        ),
        in_service=battery.in_service_date,
    )

"""Reads for the planner's pages, the API and the dashboard, each in a fixed number of queries."""
import datetime as dt
from collections import defaultdict
from dataclasses import dataclass, field

from django.db.models import F, Max, Q
from django.urls import reverse
from django.utils import timezone

from fleetcare import chemistry
from fleetcare.care import policy as care_policy
from fleetcare.care import rules as care_rules
from fleetcare.care.models import Policy as CarePolicy
from fleetcare.chemistry import equalizing
from fleetcare.fleet import site_units
from fleetcare.fleet.access import visible_sites
from fleetcare.fleet.models import Battery, Site
from fleetcare.planner import due, solver
from fleetcare.planner import inputs as planner_inputs
from fleetcare.planner import policy as planner_policy
from fleetcare.planner.models import EqualizingCharge, EqualizingReading, Policy, TaskSkip
from fleetcare.planner.plans import PLAN_DAYS, plans_for
from fleetcare.readings.models import Inspection, WaterTopUp

EQUALIZE, WATER, ALL_CELLS, PILOT = due.EQUALIZE, due.WATER, due.ALL_CELLS, due.PILOT
KINDS = (EQUALIZE, WATER, ALL_CELLS, PILOT)
KIND_ORDER = {kind: n for n, kind in enumerate(KINDS)}


@dataclass
class TodayTask:
    """One thing to do today for one battery. `status`: to_do, skipped or not_planned (no room in the plan)."""

    kind: str
    battery: Battery
    site: Site
    due_day: dt.date
    days_overdue: int
    why: str
    severity: int = 0
    start: dt.datetime | None = None
    end: dt.datetime | None = None
    vehicle: str = ""
    status: str = "to_do"
    skip_reason: str = ""
    not_planned_reason: str = ""
    situation: str = ""  # the situation its entry screen opens with ("equalized" after an equalizing charge)

    @property
    def title(self):
        if self.kind == EQUALIZE:
            return "Equalizing charge"
        if self.kind == WATER:
            return "Water"
        if self.kind == ALL_CELLS:
            return "Read all cells" if self.battery.profile.is_flooded else "Read both block voltages"
        return f"Read the pilot cell (cell {self.battery.pilot_cell})"

    @property
    def plain_reason(self):
        """Why the plan has no room for it, in the crew's words."""
        reason = self.not_planned_reason
        found = []
        if "ventilation" in reason:
            found.append("not enough ventilation left in the charging room")
        if "spare" in reason:
            found.append("no spare battery free to cover the truck")
        if "charger" in reason:
            found.append("no equalizing charger free")
        if "shift window" in reason:
            found.append("no shift window long enough")
        if "charging room" in reason and "recorded" in reason:
            found.append("no charging room recorded for this battery")
        return "; ".join(found) or reason

    @property
    def is_overdue(self):
        return self.days_overdue > 0

    @property
    def entry_url(self):
        pk = self.battery.pk
        if self.kind == EQUALIZE:
            return reverse("planner:equalizing", args=[pk])
        if self.kind == WATER:
            return reverse("readings:top_up", args=[pk])
        situation = f"&situation={self.situation}" if self.situation else ""
        if self.kind == PILOT:
            return reverse("readings:inspect", args=[pk]) + "?scope=pilot&via=today" + situation
        return reverse("readings:inspect", args=[pk]) + "?scope=all&via=today" + situation

    def sort_key(self):
        return (-self.days_overdue, -self.severity, self.start or dt.datetime.max.replace(tzinfo=dt.UTC),
                KIND_ORDER[self.kind], self.battery.serial)

    def as_dict(self):
        return {
            "kind": self.kind, "title": self.title, "battery": self.battery.pk, "serial": self.battery.serial,
            "site": self.site.code, "vehicle": self.vehicle, "due_day": self.due_day.isoformat(),
            "days_overdue": self.days_overdue, "severity": self.severity, "why": self.why,
            "start": self.start.isoformat() if self.start else None, "end": self.end.isoformat() if self.end else None,
            "status": self.status, "skip_reason": self.skip_reason, "not_planned_reason": self.not_planned_reason,
            "entry_url": self.entry_url,
        }


@dataclass
class DoneItem:
    kind: str
    battery: Battery
    at: dt.datetime
    by: str
    url: str
    detail: str = ""


@dataclass
class SiteDay:
    site: Site
    today: dt.date
    tasks: list = field(default_factory=list)
    done: list = field(default_factory=list)
    running: list = field(default_factory=list)
    problem: str = ""

    @property
    def to_do(self):
        return [t for t in self.tasks if t.status != "not_planned"]

    @property
    def not_planned(self):
        return [t for t in self.tasks if t.status == "not_planned"]

    @property
    def overdue_count(self):
        return sum(1 for t in self.to_do if t.is_overdue)


def _aware(site, naive):
    return timezone.make_aware(naive, site.tzinfo)


def read_after_equalizing(facts):
    """True when an equalizing charge ended after the battery's last all-cell reading: read all cells, "Just equalized"."""
    return equalized_since_all_cells(facts.equalizing_ended_at, facts.all_cells_at)


def equalized_since_all_cells(equalizing_ended_at, all_cells_at):
    return bool(equalizing_ended_at) and (all_cells_at is None or equalizing_ended_at > all_cells_at)


def just_equalized(batteries):
    """The pks of these batteries whose next all-cell reading is "Just equalized" (the rule above), in one query:
    a scanned label opens their entry screen as today's work does."""
    rows = batteries.order_by().annotate(
        ended=Max("equalizing_charges__ended_at"), all_cells=F("state__all_cells_at")).values_list("pk", "ended", "all_cells")
    return {pk for pk, ended, all_cells in rows if equalized_since_all_cells(ended, all_cells)}


def reading_tasks(facts, today):
    """(kind, due day, why) for the all-cell and pilot readings due by today (fleetcare.planner.due)."""
    settings = facts.settings
    ended = (timezone.localtime(facts.equalizing_ended_at, facts.battery.site.tzinfo)
             if read_after_equalizing(facts) else None)
    return [(kind, t.day, t.why) for kind, t in due.reading_triggers(
        today, facts.battery.profile.is_flooded, facts.last_all_cells, facts.last_reading, ended,
        settings.all_cells_every_days, settings.pilot_every_days)]


def _done_today(site_ids, day_starts, earliest):
    """Records made today at each site: {site pk: [DoneItem]}, running charges {site pk: [charge]}, skips."""
    done = defaultdict(list)
    done_keys = set()
    for i in Inspection.objects.current().filter(battery__site__in=site_ids, taken_at__gte=earliest).select_related(
        "battery__site", "taken_by"
    ):
        if i.taken_at < day_starts[i.battery.site_id]:
            continue
        kind = ALL_CELLS if i.scope == Inspection.Scope.ALL_CELLS else PILOT
        done[i.battery.site_id].append(DoneItem(kind, i.battery, i.taken_at, _name(i.taken_by),
                                                reverse("readings:inspection", args=[i.pk]), i.get_situation_display()))
        done_keys.add((i.battery_id, kind))
        done_keys.add((i.battery_id, PILOT))
    for t in WaterTopUp.objects.current().filter(battery__site__in=site_ids, done_at__gte=earliest).select_related(
        "battery__site", "done_by"
    ):
        if t.done_at < day_starts[t.battery.site_id]:
            continue
        done[t.battery.site_id].append(DoneItem(WATER, t.battery, t.done_at, _name(t.done_by),
                                                reverse("fleet:battery", args=[t.battery_id]),
                                                f"{site_units.volume_shown(t.volume_ml, t.battery)} {site_units.volume_label(t.battery)}"))
        done_keys.add((t.battery_id, WATER))
    running = defaultdict(list)
    for c in EqualizingCharge.objects.filter(
        Q(ended_at__isnull=True) | Q(started_at__gte=earliest), battery__site__in=site_ids
    ).select_related("battery__site", "by"):
        if c.ended_at is None:
            running[c.battery.site_id].append(c)
        if c.started_at >= day_starts[c.battery.site_id]:
            done[c.battery.site_id].append(DoneItem(EQUALIZE, c.battery, c.started_at, _name(c.by),
                                                    reverse("planner:equalizing", args=[c.battery_id]),
                                                    "running" if c.ended_at is None else "ended"))
        if c.ended_at is None or c.started_at >= day_starts[c.battery.site_id]:
            done_keys.add((c.battery_id, EQUALIZE))
    return done, running, done_keys


def _name(user):
    return (user.get_full_name() or user.username) if user else ""


def site_days(sites, now=None):
    """{site pk: SiteDay}: today's tasks, records and running charges for these sites, in a fixed number of queries."""
    now = now or timezone.now()
    sites = list(sites)
    if not sites:
        return {}
    built = planner_inputs.build(sites, now, PLAN_DAYS)
    plans = plans_for(list(built.values()), now=now)
    day_starts = {s.pk: _aware(s, dt.datetime.combine(built[s.pk].today, dt.time())) for s in sites}
    earliest = min(day_starts.values())
    done, running, done_keys = _done_today([s.pk for s in sites], day_starts, earliest)
    skips = {}
    for skip in TaskSkip.objects.filter(battery__site__in=[s.pk for s in sites],
                                        day__in={b.today for b in built.values()}).order_by("at"):
        skips[skip.battery_id, skip.kind, skip.day] = skip.reason
    result = {}
    for site in sites:
        entry = built[site.pk]
        today = entry.today
        day = SiteDay(site=site, today=today, problem=entry.problem,
                      done=sorted(done[site.pk], key=lambda d: d.at), running=running[site.pk])
        plan = plans[site.pk]

        def add(kind, facts, due_day, why, severity=0, start=None, end=None, status="to_do", reason="",
                site=site, day=day, today=today):
            if (facts.battery.pk, kind) in done_keys:
                return
            task = TodayTask(kind=kind, battery=facts.battery, site=site, due_day=due_day,
                             days_overdue=due.days_overdue(due_day, today), why=why, severity=severity,
                             start=start, end=end, vehicle=facts.vehicle, status=status, not_planned_reason=reason)
            skipped = skips.get((facts.battery.pk, kind, today))
            if skipped is not None and status == "to_do":
                task.status, task.skip_reason = "skipped", skipped
            day.tasks.append(task)

        for task in plan.for_day(today):
            facts = entry.facts.get(task.battery_id)
            if facts is not None:
                add(task.kind, facts, task.due_day, task.reason, task.severity,
                    _aware(site, task.start), _aware(site, task.end))
        for missing in plan.unplaced:
            facts = entry.facts.get(missing.battery_id)
            if facts is not None and missing.due_day <= today:
                add(missing.kind, facts, missing.due_day, missing.reason, missing.severity,
                    status="not_planned", reason=missing.reason)
        for facts in entry.facts.values():
            for kind, due_day, why in reading_tasks(facts, today):
                add(kind, facts, due_day, why)
                if kind == ALL_CELLS and read_after_equalizing(facts) and day.tasks and day.tasks[-1].kind == kind \
                        and day.tasks[-1].battery.pk == facts.battery.pk:
                    day.tasks[-1].situation = "equalized"
        day.tasks.sort(key=TodayTask.sort_key)
        result[site.pk] = day
    return result


def tasks_for_today(user, now=None):
    """Today's tasks (to do, skipped or not planned) at every site the user may see, overdue first.

    Each item is a TodayTask; `.as_dict()` gives plain JSON-ready values for the API.
    """
    days = site_days(visible_sites(user).order_by("name"), now)
    tasks = [task for day in days.values() for task in day.tasks]
    return sorted(tasks, key=TodayTask.sort_key)


def work_due_for_battery(battery, now=None):
    """[{kind, title, due, due_day, days_overdue}] for one battery: its next planned equalizing and watering (from
    the site's stored plan) and any reading due; `due` is an aware datetime (the planned start, or the day it fell
    due when the plan has no room for it), `due_day` the site's day it falls due. Used by the JSON API."""
    site = battery.site
    entry, plan = site_plan(site, now)
    facts = entry.facts.get(battery.pk)
    if facts is None:
        return []
    titles = {EQUALIZE: "Equalizing charge", WATER: "Water", ALL_CELLS: "Read all cells",
              PILOT: f"Read the pilot cell (cell {battery.pilot_cell})"}
    found = {}
    for task in plan.tasks:
        if task.battery_id == battery.pk and task.kind not in found:
            found[task.kind] = (_aware(site, task.start), task.due_day)
    for missing in plan.unplaced:
        if missing.battery_id == battery.pk and missing.kind not in found:
            found[missing.kind] = (_aware(site, dt.datetime.combine(missing.due_day, dt.time())), missing.due_day)
    for kind, due_day, _ in reading_tasks(facts, entry.today):
        found.setdefault(kind, (_aware(site, dt.datetime.combine(due_day, dt.time())), due_day))
    return [{"kind": k, "title": titles[k], "due": found[k][0], "due_day": found[k][1],
             "days_overdue": due.days_overdue(found[k][1], entry.today)} for k in KINDS if k in found]


@dataclass
class WeekCell:
    tasks: list
    chargers_used: int
    chargers: int
    airflow_used: float
    airflow: float

    @property
    def over(self):
        return self.chargers_used > self.chargers or self.airflow_used > self.airflow + 1e-6


def site_plan(site, now=None):
    """(SiteInputs, Plan) for one site's next PLAN_DAYS days, from the stored plan when still current."""
    now = now or timezone.now()
    entry = planner_inputs.build([site], now, PLAN_DAYS)[site.pk]
    return entry, plans_for([entry], now=now)[site.pk]


def room_peak(room_id, room, entry, plan):
    """The room's worst planned moment over the whole plan: airflow needed then, and the natural-ventilation
    opening that airflow calls for (inlet and outlet each)."""
    equalizing = defaultdict(float)
    for t in plan.tasks:
        if t.kind == solver.EQUALIZE and t.room_id == room_id and t.battery_id in entry.facts:
            equalizing[t.start] += entry.facts[t.battery_id].equalize_airflow_m3h
    start = max(equalizing, key=equalizing.get, default=None)
    airflow = room.baseline_airflow_m3h + (equalizing[start] if start is not None else 0.0)
    return {"start": start, "airflow_m3h": airflow,
            "opening_cm2": chemistry.natural_ventilation_opening_cm2(max(0.0, airflow)),
            "source": chemistry.VENTILATION_SOURCE}


def week_view(site, week=0, now=None):
    """A site's plan for one week per charging room: days x shift windows, with chargers and airflow used."""
    entry, plan = site_plan(site, now)
    first = entry.today + dt.timedelta(days=7 * week)
    days = [first + dt.timedelta(days=n) for n in range(7)]
    rooms = []
    for room_id, room in sorted(entry.rooms.items(), key=lambda r: r[1].room.name):
        rows = []
        for day in days:
            cells = []
            for window in entry.windows:
                start = dt.datetime.combine(day, window.starts_at)
                running = [t for t in plan.tasks if t.kind == solver.EQUALIZE and t.room_id == room_id
                           and t.start == start]
                airflow = room.baseline_airflow_m3h + sum(entry.facts[t.battery_id].equalize_airflow_m3h
                                                          for t in running if t.battery_id in entry.facts)
                cells.append(WeekCell(running, len(running), room.room.equalizing_chargers, airflow,
                                      float(room.room.airflow_m3h)))
            rows.append((day, cells))
        members = [f for f in entry.facts.values() if f.battery.charging_room_id == room_id and f.can_equalize]
        smallest = min((f.equalize_airflow_m3h for f in members), default=0.0)
        free = float(room.room.airflow_m3h) - room.baseline_airflow_m3h
        warning = ""
        if free < 0:
            warning = (f"Normal charging alone needs {room.baseline_airflow_m3h:.0f} m³/h and the ventilation gives "
                       f"{room.room.airflow_m3h:.0f} m³/h: no equalizing charge can be planned here. Check the "
                       f"ventilation survey, or how many batteries really charge at once.")
        elif members and free < smallest:
            warning = (f"Only {free:.0f} m³/h is left beyond normal charging; one equalizing charge needs "
                       f"{smallest:.0f} m³/h more: none can be planned here.")
        rooms.append({"facts": room, "rows": rows, "warning": warning, "free_airflow": free,
                      "battery_count": len(members), "peak": room_peak(room_id, room, entry, plan)})
    waterings = defaultdict(int)
    for t in plan.tasks:
        if t.kind == solver.WATER:
            waterings[t.day] += 1
    return {
        "site": site, "entry": entry, "plan": plan, "days": days, "week": week, "windows": entry.windows,
        "rooms": rooms, "waterings": [(d, waterings.get(d, 0)) for d in days],
        "unplaced": [u for u in plan.unplaced], "weeks": range(PLAN_DAYS // 7),
        "spares": entry.inputs.spares_available if entry.inputs else 0,
        "serials": {f.battery.pk: f.battery.serial for f in entry.facts.values()},
    }


def equalizing_temperatures(battery_ids, since, now, above_c):
    """Readings taken during equalizing charges with electrolyte over `above_c` (a loader for the hot-battery
    finding, registered with fleetcare.care.detection)."""
    rows = (EqualizingReading.objects.filter(charge__battery_id__in=battery_ids, taken_at__gte=since, taken_at__lte=now,
                                             temp_c__gt=above_c)
            .values_list("charge__battery_id", "taken_at", "temp_c"))
    return [care_rules.HotReading(b, t, temp, "during an equalizing charge") for b, t, temp in rows]


@dataclass
class ControlRow:
    reading: object
    counts: bool
    rise_sg: float | None
    rise_volts: float | None
    temperature: str
    within_resolution: bool = False

    @property
    def rise_points(self):
        return None if self.rise_sg is None else int(round(self.rise_sg * 1000))


def equalizing_control(battery, charge):
    """What the equalizing screen shows: every reading with its rise since the last counted one, whether SG (and
    the charging voltage, where read on every counted reading) has stopped rising beyond the instrument's
    resolution, and the electrolyte temperature against the stop and hot limits. Settings come from the
    planning policy (readings, gap, stop temperature, volts) and the findings policy (resolution, hot limit)."""
    profile = battery.profile
    plan = planner_policy.resolve(battery.site_id, profile.pk, list(Policy.objects.all()))
    care = care_policy.resolve(battery, list(CarePolicy.objects.select_related("site", "profile")))
    resolution = float(care.sg_resolution)
    count = max(2, int(plan.equalize_level_readings))
    gap = int(plan.equalize_reading_gap_minutes)
    stop_c, hot_c = float(plan.equalize_stop_temp_c), float(care.hot_battery_temp_c)
    volts_per_cell = float(plan.equalize_volts_rise_per_cell)
    limits = {"resolution_sg": resolution, "count": count, "gap_minutes": gap, "stop_temp_c": stop_c,
              "hot_temp_c": hot_c, "volts_rise_per_cell": volts_per_cell,
              "volts_rise": volts_per_cell * profile.cell_count}
    if charge is None:
        return {"limits": limits, "rows": [], "levelled": False, "counted_number": 0, "temperature": "unknown"}
    readings = list(charge.readings.all())
    minutes = [(r.taken_at - charge.started_at).total_seconds() / 60 for r in readings]
    kept = set(equalizing.spaced_readings(minutes, gap))
    rows, last = [], None
    for index, r in enumerate(readings):
        counts = index in kept
        rise_sg = rise_volts = None
        if counts and last is not None:
            rise_sg = float(r.sg_corrected) - float(last.sg_corrected)
            if r.volts is not None and last.volts is not None:
                rise_volts = float(r.volts) - float(last.volts)
        rows.append(ControlRow(r, counts, rise_sg, rise_volts,
                               equalizing.equalizing_temperature(r.temp_c, stop_c, hot_c),
                               rise_sg is not None and equalizing.has_levelled([0.0, rise_sg], resolution, 2)))
        if counts:
            last = r
    counted = [readings[i] for i in sorted(kept)]
    sg_level = equalizing.sg_has_levelled([r.sg_corrected for r in counted], resolution, count)
    last_volts = [r.volts for r in counted[-count:]]
    volts_read = len(last_volts) == count and all(v is not None for v in last_volts)
    volts_level = (equalizing.volts_have_levelled(last_volts, profile.cell_count, volts_per_cell, count)
                   if volts_read else None)
    temperatures = [row.temperature for row in rows if row.temperature != "unknown"]
    latest_temp = rows[-1].temperature if rows else "unknown"
    return {
        "limits": limits, "rows": rows, "counted_number": len(counted),
        "sg_levelled": sg_level, "volts_read": volts_read, "volts_levelled": volts_level,
        "levelled": sg_level and volts_level is not False,
        "temperature": latest_temp, "ever_hot": "hot" in temperatures,
        "latest": rows[-1].reading if rows else None,
    }


def equalizing_record(battery):
    """The battery's running equalizing charge (with readings) and its recent ones."""
    charges = list(EqualizingCharge.objects.filter(battery=battery).select_related("by").prefetch_related("readings")[:6])
    running = next((c for c in charges if c.ended_at is None), None)
    return {"running": running, "past": [c for c in charges if c is not running][:5]}


def site_takes_water(site):
    """Whether any battery of the site in use is ever watered (a site of sealed blocks only has no water to log)."""
    return Battery.objects.filter(site=site, profile__watering_allowed=True).exclude(
        status=Battery.Status.RETIRED).exists()

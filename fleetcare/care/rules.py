"""The finding rules: each is a plain function of one battery's recent data and its thresholds.

A rule returns a `Detected` (what it saw, in plain words, with the readings and thresholds it
used) or None. Loading the data and storing findings is fleetcare.care.detection's job.
"""
from dataclasses import dataclass, field
from datetime import datetime, timedelta
from typing import NamedTuple

from fleetcare import chemistry, words
from fleetcare.care import cycles, wording
from fleetcare.fleet import life, site_units
from fleetcare.planner import due
from fleetcare.readings.services import is_rested

DAYS_PER_MONTH = 30
LOW_LEVEL_LOOKBACK = timedelta(hours=24)

# A finding's caution is a topic of the one cautions template (templates/partials/cautions.html), which words it
# for flooded or sealed batteries.
EQUALIZE_CAUTION = "equalize"
WATER_CAUTION = "water"
REPLACE_CAUTION = "replace"
GAS_CAUTION = "gas"
HOT_CAUTION = "hot"
CHARGE_CAUTION = "charge"  # the general cautions alone


class Cell(NamedTuple):
    """A cell of a reading as the rules read it (a plain tuple: a fleet's pass builds hundreds of thousands)."""

    position: int
    sg_corrected: object
    volts: object
    level: str

    FIELDS = ("position", "sg_corrected", "volts", "level")


@dataclass(frozen=True, slots=True)
class TopUp:
    """A water top-up as the rules read it."""

    battery_id: int
    done_at: object
    volume_ml: object
    before_charge: bool

    FIELDS = ("battery_id", "done_at", "volume_ml", "before_charge")


@dataclass(frozen=True, slots=True)
class Reading:
    """An inspection as the rules read it: its summary, and its cells where a rule needs them.
    Detection loads thousands of these per pass; a plain row costs a fraction of a model instance."""

    pk: int
    battery_id: int
    taken_at: datetime
    situation: str
    scope: str
    hours_since_charge: object
    sg_mean: object
    sg_min: object
    sg_max: object
    sg_spread: object
    lowest_position: object
    soc_percent: object
    volts_total: object
    has_low_level: bool = False
    cells: tuple = ()

    FIELDS = ("pk", "battery_id", "taken_at", "situation", "scope", "hours_since_charge", "sg_mean", "sg_min",
              "sg_max", "sg_spread", "lowest_position", "soc_percent", "volts_total")


@dataclass(frozen=True, slots=True)
class HotReading:
    """An electrolyte temperature over the hot-battery limit: where it was read (an inspection, one of its
    cells, or a reading during an equalizing charge)."""

    battery_id: int
    taken_at: datetime
    temp_c: object
    what: str
    inspection_id: int | None = None


@dataclass
class Detected:
    kind: str
    severity: int
    summary: str
    rule: str
    readings: list
    thresholds: list
    next_step: str
    caution: str = ""
    positions: list = field(default_factory=list)
    persistent: bool = False
    inspection: object = None
    facts: dict = field(default_factory=dict)

    def evidence(self):
        data = {
            "rule": self.rule,
            "readings": self.readings,
            "threshold": self.thresholds[0] if self.thresholds else None,
            "thresholds": self.thresholds,
            "next_step": self.next_step,
            "caution": self.caution,
        }
        data.update(self.facts)
        return data


@dataclass
class ReadingHistory:
    """Everything the rules may look at for one battery, loaded by detection in a fixed number of queries."""

    battery: object
    policy: object
    now: datetime
    post_charge: list = field(default_factory=list)  # Readings: all-cell post-charge, newest first, with cells
    block_readings: list = field(default_factory=list)  # Readings: all-cell of block batteries, newest first, with cells
    recent: list = field(default_factory=list)  # Readings: current inspections in the look-back, newest first
    last_charge_at: datetime | None = None
    first_charge_at: datetime | None = None
    charges_logged: int = 0
    top_ups: list = field(default_factory=list)  # recent top-ups, newest first
    last_top_up_at: datetime | None = None
    planning: object = None  # the planning policy as it applies to this battery (fleetcare.planner.policy)
    charge_dates: list = field(default_factory=list)  # local dates of post-charge readings, planner's charge window
    latest_levels: dict = field(default_factory=dict)  # position -> (level, taken_at)
    fittings: list = field(default_factory=list)
    hot_readings: list = field(default_factory=list)  # HotReadings over the lowest hot limit, newest first

    @property
    def profile(self):
        return self.battery.profile

    @property
    def site(self):
        return self.battery.site


def _f(value, places=3):
    return None if value is None else round(float(value), places)


def _when(moment):
    return moment.isoformat() if moment else None


def _points(sg_difference):
    return int(round(float(sg_difference) * 1000))


def _inspection_ref(inspection):
    return {
        "inspection_id": inspection.pk,
        "taken_at": _when(inspection.taken_at),
        "situation": inspection.situation,
    }


# --- Weak cell and spread ----------------------------------------------------------------------


def _cell_values(inspection):
    return [(c.position, c.sg_corrected) for c in inspection.cells if c.sg_corrected is not None]


def gap_rule_applies(policy, cell_count):
    """The any-two-cells rule comes from a manual about vehicle batteries of a few cells: it applies only to
    batteries of at most the set number of cells (0 turns it off)."""
    limit = int(policy.cell_gap_rule_max_cells)
    return 0 < cell_count <= limit


def _none_can_be_weak(judged, values):
    """The lowest cell is the furthest below both the others' mean and the highest cell: when it is not weak, no
    cell is (most trays, most days), and the others need not be judged one by one."""
    return not judged(min(sg for _, sg in values))[0]


def weak_cells(inspection, policy, cell_count=None):
    """Cells judged weak on one post-charge inspection: {position: reasons}, plus the figures used.

    Each comparison allows for the hydrometer: a cell against the others' mean must be below by more than
    the threshold plus one resolution; two cells apart by more than the gap plus two (each reading may be
    off by one resolution)."""
    values = _cell_values(inspection)
    if len(values) < 2:
        return {}, []
    total = sum(sg for _, sg in values)
    highest = max(sg for _, sg in values)
    equalized = inspection.situation == "equalized"
    resolution = policy.sg_resolution
    gap_rule = gap_rule_applies(policy, cell_count if cell_count is not None else len(values))

    def judged(sg):
        others_mean = (total - sg) / (len(values) - 1)
        below = others_mean - sg
        below_highest = highest - sg
        reasons = []
        if chemistry.beyond_resolution(below, policy.weak_cell_below_mean_sg, resolution):
            reasons.append("weak")
        if equalized and chemistry.beyond_resolution(below, policy.failing_cell_after_equalize_sg, resolution):
            reasons.append("failing")
        if gap_rule and chemistry.beyond_resolution(below_highest, policy.unserviceable_cell_gap_sg, resolution, 2):
            reasons.append("apart")
        return reasons, others_mean, below, below_highest

    if _none_can_be_weak(judged, values):
        return {}, []
    flagged, rows = {}, []
    for position, sg in values:
        reasons, others_mean, below, below_highest = judged(sg)
        if reasons:
            flagged[position] = reasons
            rows.append({
                "position": position, "sg_corrected": _f(sg), "others_mean": _f(others_mean, 4),
                "below_others_points": _points(below), "below_highest_points": _points(below_highest),
                "reasons": reasons,
            })
    return flagged, rows


def weak_cell(data):
    if not data.profile.is_flooded or not data.post_charge:
        return None
    latest = data.post_charge[0]
    cell_count = data.profile.cell_count
    flagged, rows = weak_cells(latest, data.policy, cell_count)
    if not flagged:
        return None
    previous = weak_cells(data.post_charge[1], data.policy, cell_count)[0] if len(data.post_charge) > 1 else {}
    persistent = bool(set(flagged) & set(previous))
    failing = any("failing" in r for r in flagged.values())
    positions = sorted(flagged)
    cells = ", ".join(str(p) for p in positions)
    worst = max(rows, key=lambda r: r["below_others_points"])
    situation = "equalizing" if latest.situation == "equalized" else "charging"
    summary = (f"Cell{'s' if len(positions) > 1 else ''} {cells} read low after {situation}: cell {worst['position']} "
               f"is {worst['below_others_points']} points below the other cells' mean")
    if failing:
        summary += f" ({wording.FAILING_AFTER_EQUALIZING})"
    if persistent:
        summary += f"; {wording.LOW_ON_CONSECUTIVE}"
    thresholds = [data.policy.evidence("weak_cell_below_mean_sg"), data.policy.evidence("failing_cell_after_equalize_sg")]
    if gap_rule_applies(data.policy, cell_count):
        thresholds.append(data.policy.evidence("unserviceable_cell_gap_sg"))
    thresholds += [data.policy.evidence("sg_resolution"), data.policy.evidence("cell_gap_rule_max_cells")]
    if failing:
        next_step = ("The cell is failing: arrange for it to be replaced (a motive tray can take a single new cell) "
                     "and read all cells again after the next charge.")
        caution = REPLACE_CAUTION
    elif data.profile.equalizing_allowed:
        next_step = ("Give an equalizing charge, then read all cells again. A cell still more than "
                     f"{_points(data.policy.weak_cell_below_mean_sg)}–{_points(data.policy.failing_cell_after_equalize_sg)} "
                     "points below the others after equalizing is failing.")
        caution = EQUALIZE_CAUTION
    else:
        next_step = "This profile does not allow equalizing: ask the battery maker how to recover or replace the cell."
        caution = REPLACE_CAUTION
    return Detected(
        kind="weak_cell", severity=3 if failing else 2, summary=summary,
        rule=("On a just-charged or just-equalized battery, a cell whose corrected SG is below the mean of the "
              "other cells by more than the weak-cell threshold plus the hydrometer's resolution (the failing threshold "
              "after equalizing), or, on batteries of a few cells, more than the unserviceable gap plus twice the "
              "resolution below the highest cell."),
        readings=[dict(_inspection_ref(latest), cells=rows, sg_mean=_f(latest.sg_mean), sg_max=_f(latest.sg_max))],
        thresholds=thresholds, next_step=next_step, caution=caution, positions=positions,
        persistent=persistent, inspection=latest,
    )


def lagging_cells(inspection, limit, resolution, readings_compared):
    """{position: SG below the median of the other cells} for the cells of one post-charge inspection that lag
    by more than `limit` plus `readings_compared` resolutions."""
    below = chemistry.below_median_of_others_sg(_cell_values(inspection))
    return {position: lag for position, lag in below.items()
            if chemistry.beyond_resolution(lag, limit, resolution, readings_compared)}


def _may_lag(furthest, limit, resolution, readings_compared):
    """Whether any cell of a reading can lag by more than the limit: its furthest-behind cell does (`furthest`, from
    fleetcare.chemistry.furthest_below_median_of_others_sg: the lowest cell lags the most, so one median answers
    instead of one per cell)."""
    return furthest is not None and chemistry.beyond_resolution(furthest, limit, resolution, readings_compared)


def spread_is_high(post_charge, policy):
    """(lagging, persistent): the cells that make the spread high, {position: SG below the others' median on
    the latest reading}.

    A cell counts when it reads below the median of the other cells by more than the limit plus one resolution
    on the latest post-charge reading (a cell against the median of many: one reading may be off by one
    resolution), or by more than the limit on each of the last `spread_readings_in_a_row` post-charge readings
    (the same cell each time: persistence is the evidence, reading errors do not repeat). Judging cells against
    the median, not the highest against the lowest, keeps the rule the same on small and large trays."""
    if not post_charge:
        return {}, False
    limit, resolution = policy.equalize_spread_sg, policy.sg_resolution
    needed = max(1, int(policy.spread_readings_in_a_row))
    run = post_charge[:needed]
    furthest = [chemistry.furthest_below_median_of_others_sg(_cell_values(i)) for i in run]  # latest first
    if not _may_lag(furthest[0], limit, resolution, 1) and not (
            len(run) == needed and all(_may_lag(f, limit, resolution, 0) for f in furthest)):
        return {}, False
    latest = chemistry.below_median_of_others_sg(_cell_values(post_charge[0]))
    at_once = {p for p, lag in latest.items() if chemistry.beyond_resolution(lag, limit, resolution, 1)}
    in_a_row = set()
    if len(run) == needed:
        in_a_row = set.intersection(*(set(lagging_cells(i, limit, resolution, 0)) for i in run))
    persistent = bool(in_a_row) and needed > 1
    return {p: latest[p] for p in sorted(at_once | in_a_row)}, persistent


@dataclass(frozen=True, slots=True)
class SpreadGuides:
    """The spread rule's two lines for a chart of how far a battery's furthest-behind cell reads below the median
    of the other cells after charge (`Inspection.sg_behind_median`): over `once_sg` on the latest reading, or over
    `in_a_row_sg` on each of the last `in_a_row` readings, the rule finds the spread high. (The rule also asks that
    it be the same cell each time; the chart shows the furthest cell of each reading.)"""

    once_sg: float
    in_a_row_sg: float
    in_a_row: int

    def over_once(self, behind_sg):
        return behind_sg is not None and float(behind_sg) > self.once_sg + 1e-9

    def over_in_a_row(self, behind_sg):
        return behind_sg is not None and float(behind_sg) > self.in_a_row_sg + 1e-9


def spread_guides(policy):
    """The lines `spread_is_high` judges by, at this battery's settings."""
    limit, resolution = float(policy.equalize_spread_sg), float(policy.sg_resolution)
    needed = max(1, int(policy.spread_readings_in_a_row))
    return SpreadGuides(once_sg=limit + (resolution if needed > 1 else 0), in_a_row_sg=limit, in_a_row=needed)


def high_spread(data):
    if not data.profile.is_flooded or not data.post_charge:
        return None
    latest = data.post_charge[0]
    limit = data.policy.equalize_spread_sg
    lagging, persistent = spread_is_high(data.post_charge, data.policy)
    if not lagging:
        return None
    shown = max(2, int(data.policy.spread_readings_in_a_row))
    readings = []
    for i in data.post_charge[:shown]:
        below = chemistry.below_median_of_others_sg(_cell_values(i))
        readings.append(dict(_inspection_ref(i), sg_spread=_f(i.sg_spread), sg_min=_f(i.sg_min), sg_max=_f(i.sg_max),
                             lowest_cell=i.lowest_position,
                             lagging_cells=[{"position": p, "below_median_points": _points(below[p])}
                                            for p in lagging if p in below]))
    worst = max(lagging, key=lambda p: (lagging[p], -p))
    cells = ", ".join(str(p) for p in lagging)
    if data.profile.equalizing_allowed:
        next_step = "Give an equalizing charge (the care planner schedules it), then read all cells again."
        caution = EQUALIZE_CAUTION
    else:
        next_step = "This profile does not allow equalizing: ask the battery maker."
        caution = ""
    return Detected(
        kind="high_spread", severity=2,
        summary=(f"Spread {_points(latest.sg_spread)} points after charging: cell{'s' if len(lagging) > 1 else ''} "
                 f"{cells} behind the others, cell {worst} by {_points(lagging[worst])} points (limit {_points(limit)}"
                 f"{', on consecutive readings' if persistent else ''}): an equalizing charge is due"),
        rule=("After a charge, a cell reads below the median of the other cells by more than the equalizing threshold "
              "plus the hydrometer's resolution, or by more than the threshold on the set number of post-charge "
              "readings in a row (the same cell each time)."),
        readings=readings, thresholds=[data.policy.evidence("equalize_spread_sg"), data.policy.evidence("sg_resolution"),
                                       data.policy.evidence("spread_readings_in_a_row")], next_step=next_step,
        caution=caution, positions=list(lagging), persistent=persistent, inspection=latest,
    )


# --- Sulfation ---------------------------------------------------------------------------------


def _short_of_full(inspection, profile, limit):
    return inspection.sg_mean is not None and profile.full_charge_sg - inspection.sg_mean > limit


def _partial_charge_run(data):
    """The trailing run of readings below the state-of-charge limit, oldest first."""
    run = []
    for inspection in data.recent:
        if inspection.soc_percent is None:
            continue
        if inspection.soc_percent >= data.policy.partial_charge_soc_percent:
            break
        run.append(inspection)
    return list(reversed(run))


def sulfation(data):
    profile, policy = data.profile, data.policy
    signs, readings, thresholds, latest_inspection = [], [], [], None
    if profile.full_charge_sg is not None and data.post_charge:
        limit = policy.sulfation_below_full_sg
        needed = int(policy.sulfation_inspections)
        latest = data.post_charge[0]
        streak = data.post_charge[:needed]
        short_streak = len(streak) >= needed and all(_short_of_full(i, profile, limit) for i in streak)
        after_equalizing = latest.situation == "equalized" and _short_of_full(latest, profile, limit)
        if short_streak or after_equalizing:
            shown = streak if short_streak else [latest]
            if short_streak:
                signs.append(f"mean SG short of the full-charge {profile.full_charge_sg} by more than "
                             f"{_points(limit)} points on {len(streak)} post-charge readings in a row")
            if after_equalizing:
                signs.append("mean SG still short after an equalizing charge")
            readings += [dict(_inspection_ref(i), sg_mean=_f(i.sg_mean), full_charge_sg=_f(profile.full_charge_sg),
                              short_points=_points(profile.full_charge_sg - i.sg_mean)) for i in shown]
            thresholds += [policy.evidence("sulfation_below_full_sg"), policy.evidence("sulfation_inspections")]
            latest_inspection = latest
    run = _partial_charge_run(data)
    if len(run) >= 2 and run[-1].taken_at - run[0].taken_at > timedelta(days=int(policy.partial_charge_days)):
        days = (run[-1].taken_at - run[0].taken_at).days
        signs.append(f"below {policy.partial_charge_soc_percent:.0f} % state of charge for {words.count(days, 'day')} "
                     f"({words.count(len(run), 'reading')})")
        readings += [dict(_inspection_ref(i), soc_percent=_f(i.soc_percent, 1)) for i in (run[0], run[-1])]
        thresholds += [policy.evidence("partial_charge_soc_percent"), policy.evidence("partial_charge_days")]
        latest_inspection = latest_inspection or run[-1]
    if data.battery.status == "spare":
        last_charge = data.last_charge_at
        since = last_charge or _start_of(data.battery, data.now)
        idle = data.now - since
        if idle > timedelta(days=int(policy.storage_charge_days)):
            signs.append(f"spare battery with no charge logged for {words.count(idle.days, 'day')}")
            readings.append({"last_charge_at": _when(last_charge), "in_service_date": str(data.battery.in_service_date),
                             "days_without_charge": idle.days})
            thresholds.append(policy.evidence("storage_charge_days"))
    if not signs:
        return None
    if profile.equalizing_allowed:
        next_step = wording.EQUALIZE_AND_TEST
        caution = EQUALIZE_CAUTION
    else:
        next_step = "Give a full charge now and read the blocks after the rest time; if they stay low, book a capacity test."
        caution = ""
    return Detected(
        kind="sulfation", severity=2, summary="Suspected sulfation: " + "; ".join(signs),
        rule=("Sulfate hardens when a battery stands partly discharged: mean SG that stays short of the full-charge "
              "value after charging (or after equalizing), a battery left below half charge for days, or a spare "
              "left without a charge."),
        readings=readings, thresholds=thresholds, next_step=next_step, caution=caution,
        persistent=len(signs) > 1 or any("in a row" in s for s in signs), inspection=latest_inspection,
        facts={"signs": signs},
    )


def _start_of(battery, now):
    start = datetime.combine(battery.in_service_date, datetime.min.time())
    return start.replace(tzinfo=now.tzinfo)


# --- Deep discharge ----------------------------------------------------------------------------


def vehicle_at(fittings, moment):
    """The fitting open at `moment`, or None."""
    for fitting in fittings:
        if fitting.fitted_at <= moment and (fitting.removed_at is None or fitting.removed_at > moment):
            return fitting
    return None


def deep_discharge_events(data, since=None):
    since = since or data.now - timedelta(days=int(data.policy.event_window_days))
    events = []
    for inspection in data.recent:
        if inspection.taken_at < since:
            break
        if inspection.soc_percent is not None and inspection.soc_percent < data.policy.deep_discharge_soc_percent:
            fitting = vehicle_at(data.fittings, inspection.taken_at)
            events.append({
                "inspection": inspection, "fitting": fitting,
                "vehicle": fitting.vehicle if fitting else None, "shift": fitting.shift if fitting else "",
            })
    return events


def deep_discharge(data):
    events = deep_discharge_events(data)
    if not events:
        return None
    by_truck = {}
    for e in events:
        key = (e["vehicle"].asset_number if e["vehicle"] else "not fitted", e["shift"])
        by_truck[key] = by_truck.get(key, 0) + 1
    trucks = "; ".join(f"{asset}{' ' + shift.lower() + ' shift' if shift else ''}: {n}"
                       for (asset, shift), n in sorted(by_truck.items(), key=lambda kv: -kv[1]))
    lowest = min(events, key=lambda e: e["inspection"].soc_percent)["inspection"]
    window = int(data.policy.event_window_days)
    return Detected(
        kind="deep_discharge", severity=2,
        summary=(f"{words.count(len(events), 'deep discharge')} in {words.count(window, 'day')}, lowest "
                 f"{lowest.soc_percent:.0f} % state of charge ({trucks})"),
        rule=("Any reading (in use, before charge or at rest) under the deep-discharge state of charge "
              "(80 % depth of discharge)."),
        readings=[dict(_inspection_ref(e["inspection"]), soc_percent=_f(e["inspection"].soc_percent, 1),
                       vehicle=e["vehicle"].asset_number if e["vehicle"] else None, shift=e["shift"]) for e in events],
        thresholds=[data.policy.evidence("deep_discharge_soc_percent"), data.policy.evidence("event_window_days")],
        next_step=(("Charge the chair or scooter every night, and ask its user or carers to put it on charge as soon "
                    "as it shows low. " if data.profile.application == "mobility" else
                    "Ask the truck's operators to change batteries before the state of charge drops under "
                    f"{data.policy.deep_discharge_soc_percent:.0f} %; check the battery rotation for that truck and shift. ")
                   + "Repeated deep discharge shortens battery life."),
        inspection=events[0]["inspection"],
        facts={"event_count": len(events),
               "by_truck": [{"vehicle": a, "shift": s, "events": n} for (a, s), n in sorted(by_truck.items())]},
    )


def left_discharged(data):
    """The latest reading with a state of charge was taken at rest and shows the battery under the limit,
    and no charge is logged since: a battery (or chair pair) left standing discharged sulfates within days."""
    latest = next((i for i in data.recent if i.soc_percent is not None), None)
    if latest is None or not is_rested(latest, data.profile):
        return None
    limit = data.policy.left_discharged_soc_percent
    if latest.soc_percent >= limit:
        return None
    if data.last_charge_at is not None and data.last_charge_at > latest.taken_at:
        return None
    chair = data.profile.application == "mobility"
    what = "chair or scooter pair" if chair else "battery"
    return Detected(
        kind="left_discharged", severity=3 if chair else 2,
        summary=(f"Left discharged: found at rest at {latest.soc_percent:.0f} % state of charge "
                 f"(limit {limit:.0f} %): charge now"),
        rule=("A reading taken at rest (off charge and load) under the left-discharged state of charge, with no charge "
              "logged since. Lead-acid batteries left partly discharged sulfate within days."),
        readings=[dict(_inspection_ref(latest), soc_percent=_f(latest.soc_percent, 1),
                       volts_total=_f(latest.volts_total, 2),
                       last_charge_at=_when(data.last_charge_at))],
        thresholds=[data.policy.evidence("left_discharged_soc_percent")],
        next_step=(f"Put the {what} on charge now and let it charge fully (do not stop the charge early), then read it "
                   "again after the rest time. If it will not come back above half charge, book a capacity test."
                   + (" Ask the user or carers to charge it every night." if chair else "")),
        caution=CHARGE_CAUTION,
        inspection=latest,
    )


def _site_temp(temp_c, site):
    if site.temp_unit == "F":
        return f"{chemistry.c_to_f(float(temp_c)):.0f} °F"
    return f"{float(temp_c):.0f} °C"


def hot_battery(data):
    """An electrolyte temperature over the absolute limit on any reading in the event window."""
    limit = data.policy.hot_battery_temp_c
    since = data.now - timedelta(days=int(data.policy.event_window_days))
    hot = [r for r in data.hot_readings if r.temp_c > limit and since <= r.taken_at <= data.now]
    if not hot:
        return None
    hottest = max(hot, key=lambda r: r.temp_c)
    site = data.site
    return Detected(
        kind="hot_battery", severity=3,
        summary=(f"Hot battery: electrolyte at {_site_temp(hottest.temp_c, site)} ({hottest.what}, limit "
                 f"{_site_temp(limit, site)}){f'; {len(hot)} hot readings' if len(hot) > 1 else ''}"),
        rule=("Any reading of electrolyte temperature over the absolute limit for the cells (inspections, single cells "
              "and readings during an equalizing charge), within the event window."),
        readings=[{"taken_at": _when(r.taken_at), "temp_c": _f(r.temp_c, 1), "where": r.what,
                   "inspection_id": r.inspection_id} for r in hot[:10]],
        thresholds=[data.policy.evidence("hot_battery_temp_c"), data.policy.evidence("event_window_days")],
        next_step=("Stop charging and let the battery cool with the vent caps on; do not start another charge until it "
                   "is under the equalizing limit. Then check: the charger (its profile for this battery, its current "
                   "and timer: an equalizing or normal charge that ran too long), the charging room (ventilation "
                   "running, room temperature, batteries charged too close together), and the cells (one much hotter "
                   "than the rest, or with a low voltage or SG, may be shorted: ask the battery maker)."),
        caution=HOT_CAUTION,
        facts={"hottest_temp_c": _f(hottest.temp_c, 1), "hot_readings": len(hot)},
    )


# --- Watering ----------------------------------------------------------------------------------


def low_level(data):
    if not data.profile.watering_allowed:
        return None
    low = {p: taken for p, (level, taken) in data.latest_levels.items()
           if level == "low" and (data.last_top_up_at is None or taken > data.last_top_up_at)}
    if not low:
        return None
    positions = sorted(low)
    return Detected(
        kind="low_level", severity=2,
        summary=f"Electrolyte low in cell{'s' if len(positions) > 1 else ''} {', '.join(map(str, positions))}, no top-up since",
        rule="The latest level reading for a cell says low, and no water has been logged since.",
        readings=[{"position": p, "reported_at": _when(low[p]), "level": "low"} for p in positions]
        + [{"last_top_up_at": _when(data.last_top_up_at)}],
        thresholds=[], next_step=("Top up after the next charge, to the level mark. Water before charging only if "
                                  "the plates are exposed."),
        caution=WATER_CAUTION, positions=positions,
    )


def watering_overdue(data):
    """Overdue by the planner's own rule (fleetcare.planner.due), so the finding, the plan and the overview agree."""
    if data.planning is None or not due.takes_water(data.profile) or data.battery.status not in due.CARED_FOR_STATUSES:
        return None
    zone = data.site.tzinfo
    today = data.now.astimezone(zone).date()
    last = data.last_top_up_at.astimezone(zone).date() if data.last_top_up_at else None
    schedule = due.schedule(data.planning, False, True, data.charge_dates, None, today, data.site.charges_per_day)
    late = due.days_overdue(due.watering_due(schedule, today, last, data.battery.in_service_date), today)
    if not late:
        return None
    days = (today - (last or data.battery.in_service_date)).days
    what = (f"last top-up {words.day(data.last_top_up_at)}" if data.last_top_up_at
            else f"no top-up logged since it went into service on {words.day(data.battery.in_service_date)}")
    thresholds = [data.planning.evidence("water_every_days")]
    if int(data.planning.water_every_charges):
        thresholds.append(data.planning.evidence("water_every_charges"))
    return Detected(
        kind="watering_overdue", severity=2,
        summary=(f"Watering overdue: {what}, {words.count(days, 'day')} ago "
                 f"(interval {words.count(schedule.water_every_days, 'day')})"),
        rule="A flooded battery with no top-up logged for longer than its watering interval in the planning policy.",
        readings=[{"last_top_up_at": _when(data.last_top_up_at), "days_since": days, "days_overdue": late}],
        thresholds=thresholds,
        next_step="Check the levels after the next charge and top up to the level mark; log the top-up.",
        caution=WATER_CAUTION,
    )


def water_use(data):
    """Water use per cell per month and the overcharge it implies, or None without two top-ups in the window."""
    window = timedelta(days=int(data.policy.water_use_window_days))
    in_window = sorted((t for t in data.top_ups if t.done_at > data.now - window), key=lambda t: t.done_at)
    if len(in_window) < 2:
        return None
    span_days = (in_window[-1].done_at - in_window[0].done_at).total_seconds() / 86400
    if span_days < 1:
        return None
    cells = data.profile.cell_count
    ml_per_cell = sum(float(t.volume_ml) for t in in_window[1:]) / cells
    ml_per_cell_month = ml_per_cell / span_days * DAYS_PER_MONTH
    grams_per_ah = chemistry.electrolysis_water_g(1.0)
    overcharge_ah_month = ml_per_cell_month / grams_per_ah  # water 1 g per mL
    charges_month = float(data.site.charges_per_day) * DAYS_PER_MONTH
    capacity = float(data.profile.capacity_ah)
    per_charge_pct = overcharge_ah_month / charges_month / capacity * 100 if charges_month else None
    band_ml = (chemistry.electrolysis_water_g(float(data.policy.max_overcharge_percent) / 100 * capacity * charges_month)
               if charges_month else None)
    return {
        "top_ups": in_window, "span_days": span_days, "ml_per_cell_month": ml_per_cell_month,
        "overcharge_ah_month": overcharge_ah_month, "charges_month": charges_month,
        "overcharge_pct_per_charge": per_charge_pct, "band_ml_per_cell_month": band_ml,
        "grams_per_ah": grams_per_ah,
    }


def _cell_water(ml, battery):
    """A per-cell amount as the battery's site reads it: '1285 mL' or '43.5 US fl oz'."""
    return f"{site_units.cell_water_shown(ml, battery)} {site_units.cell_water_label(battery)}"


def high_water_use(data):
    if not data.profile.watering_allowed:
        return None
    use = water_use(data)
    if use is None or use["overcharge_pct_per_charge"] is None:
        return None
    if use["overcharge_pct_per_charge"] <= float(data.policy.max_overcharge_percent):
        return None
    per_charge_ah = use["overcharge_ah_month"] / use["charges_month"]
    return Detected(
        kind="high_water_use", severity=2,
        summary=(f"Uses {_cell_water(use['ml_per_cell_month'], data.battery)} of water per cell per month (band up to "
                 f"{_cell_water(use['band_ml_per_cell_month'], data.battery)}): about {use['overcharge_ah_month']:.0f} Ah of overcharge a month, "
                 f"{per_charge_ah:.0f} Ah ({use['overcharge_pct_per_charge']:.0f} % of rating) per charge"),
        rule=("Water lost per cell is water split by overcharge (Faraday's law: about "
              f"{use['grams_per_ah']:.3f} g per Ah). Water use above the band means the battery is overcharged: "
              "a charger setting or an ageing battery. The first top-up in the window starts the measurement; the water "
              "of the later ones, over the days between the first and the last, gives the monthly rate."),
        readings=[{"done_at": _when(t.done_at), "volume_ml": _f(t.volume_ml, 1), "before_charge": t.before_charge}
                  for t in use["top_ups"]],
        thresholds=[data.policy.evidence("max_overcharge_percent"), data.policy.evidence("water_use_window_days")],
        next_step=("Check the charger: its profile for this battery, its end-of-charge current and timer. If the "
                   "charger is right, the battery may be ageing: book a capacity test."),
        caution=GAS_CAUTION,
        facts={
            "ml_per_cell_month": round(use["ml_per_cell_month"], 1),
            "band_ml_per_cell_month": round(use["band_ml_per_cell_month"], 1),
            "estimated_overcharge_ah_per_month": round(use["overcharge_ah_month"], 1),
            "estimated_overcharge_ah_per_charge": round(per_charge_ah, 1),
            "overcharge_percent_of_rating_per_charge": round(use["overcharge_pct_per_charge"], 1),
            "charges_per_month": round(use["charges_month"], 1),
            "water_g_per_ah": round(use["grams_per_ah"], 4),
        },
    )


def water_before_charge(data):
    if not data.profile.watering_allowed:
        return None
    since = data.now - timedelta(days=int(data.policy.event_window_days))
    early = []
    for top_up in data.top_ups:
        if top_up.done_at <= since or not top_up.before_charge:
            continue
        low_reported = any(
            i.has_low_level and top_up.done_at - LOW_LEVEL_LOOKBACK <= i.taken_at <= top_up.done_at for i in data.recent
        )
        if not low_reported:
            early.append(top_up)
    if not early:
        return None
    return Detected(
        kind="water_before_charge", severity=1,
        summary=(f"Water added before charging {len(early)} time{'s' if len(early) != 1 else ''} with no low level "
                 "reported"),
        rule="Water goes in after charging; before charging only when a low level (plates showing) is reported.",
        readings=[{"done_at": _when(t.done_at), "volume_ml": _f(t.volume_ml, 1)} for t in early],
        thresholds=[data.policy.evidence("event_window_days")],
        next_step=("Water after charging, to the level mark: electrolyte rises on charge and can overflow if "
                   "topped up before. Remind the crew; water before charging only if the plates are exposed."),
        caution=WATER_CAUTION,
    )


# --- Sealed blocks -----------------------------------------------------------------------------


def _block_volts(inspection, blocks):
    volts = {c.position: c.volts for c in inspection.cells if c.volts is not None}
    return volts if len(volts) == blocks else None


def _block_gap(volts):
    return max(volts.values()) - min(volts.values())


def weak_block(data):
    profile = data.profile
    if not profile.reads_by_block or profile.monoblocks < 2:
        return None
    rested, skipped = [], []
    for inspection in data.block_readings:
        volts = _block_volts(inspection, profile.monoblocks)
        if volts is None:
            continue
        if is_rested(inspection, profile):
            rested.append((inspection, volts))
        elif not rested:
            skipped.append(inspection)
    if not rested:
        return None
    latest, volts = rested[0]
    limit = data.policy.block_ocv_gap_v
    gap = _block_gap(volts)
    if gap <= limit:
        return None
    lowest = min(volts, key=volts.get)
    persistent = len(rested) > 1 and _block_gap(rested[1][1]) > limit
    readings = [dict(_inspection_ref(i), hours_since_charge=_f(i.hours_since_charge, 1),
                     blocks={str(p): _f(v, 3) for p, v in sorted(block_volts.items())},
                     gap_v=_f(_block_gap(block_volts), 3))
                for i, block_volts in rested[:2]]
    readings += [dict(_inspection_ref(i), hours_since_charge=_f(i.hours_since_charge, 1),
                      not_rested=f"taken sooner than the {profile.ocv_rest_hours} h rest: not used")
                 for i in skipped]
    return Detected(
        kind="weak_block", severity=2,
        summary=(f"Block {lowest} rests {gap:.2f} V below its partner (limit {limit:.2f} V): replace the pair"),
        rule="In a pair of sealed blocks, rested open-circuit voltages more than the limit apart mean a weak block.",
        readings=readings, thresholds=[data.policy.evidence("block_ocv_gap_v")],
        next_step=("Replace both blocks as a matched pair: a new block beside an old one wears out early. Charge the "
                   "new pair fully before use."),
        caution=REPLACE_CAUTION, positions=[lowest], persistent=persistent, inspection=latest,
    )


# --- Ageing ------------------------------------------------------------------------------------


def charge_count(data):
    """Charges so far: the one estimate the replacement forecast states too (fleetcare.care.cycles)."""
    first = data.first_charge_at.date() if data.first_charge_at else None
    return cycles.charges_so_far(data.battery.in_service_date, data.now.date(), data.site.charges_per_day,
                                 data.charges_logged, first)


def ageing(data):
    profile = data.profile
    days = (data.now.date() - data.battery.in_service_date).days
    years = days / 365.25
    count = charge_count(data)
    past_life = life.is_past_design_life(data.battery.in_service_date, profile.design_life_years, data.now.date())
    past_cycles = count.whole > profile.design_cycles
    if not (past_life or past_cycles):
        return None
    parts = []
    if past_life:
        parts.append(f"in service {years:.1f} years (design life {profile.design_life_years} years)")
    if past_cycles:
        parts.append(f"about {count.whole:,} charges (design {profile.design_cycles:,} cycles)")
    design = {"name": "design_life", "label": "design life and cycles of the battery profile",
              "value": f"{profile.design_life_years} years / {profile.design_cycles} cycles", "unit": "",
              "source": f"battery profile {profile.name} (maker's figures)"}
    return Detected(
        kind="ageing", severity=1, summary="Past design life: " + "; ".join(parts),
        rule=("A battery in service longer than its profile's design life, or with more estimated charge cycles than "
              "its design cycles, counting every charge as a cycle. Charges are the site's charges per day times the days "
              "in service, or, where post-charge readings are logged more often than that, the logged charges plus "
              "the logged rate before the first of them."),
        readings=[{"in_service_date": str(data.battery.in_service_date), "years_in_service": round(years, 2),
                   "cycles_logged": count.logged, "cycles_estimated": count.whole,
                   "charges_per_day": _f(count.per_day, 2), "charges_per_day_from": count.basis}],
        thresholds=[design],
        next_step=("Book a capacity test: replacement is usually due when it gives under 80 % of rated capacity "
                   "(IEEE Std 450 uses 80 %, from memory). Put the replacement in the budget."),
        caution=REPLACE_CAUTION,
    )


RULES = (weak_cell, high_spread, sulfation, deep_discharge, left_discharged, hot_battery, low_level, watering_overdue,
         high_water_use, water_before_charge, weak_block, ageing)


def detect(data):
    """Every finding one battery's data shows now; retired batteries show none."""
    if data.battery.status == "retired":
        return []
    return [d for d in (rule(data) for rule in RULES) if d is not None]


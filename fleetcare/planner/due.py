"""When equalizing, watering and readings fall due: the one rule every screen uses.

Plain Python, no Django, no database: dates are the site's local dates, settings are the planning policy as
resolved for the battery (fleetcare.planner.policy). The planner's solver, today's work, the week plan, the
API, the overview's counts, the battery list's filter and the watering-overdue finding all ask here.

* Equalizing is due `equalize_every_days` after the last equalizing charge, or after `equalize_every_charges`
  charges, whichever comes sooner (either may be off); watering `water_every_days` after the last top-up, or
  after `water_every_charges` charges, whichever is sooner. With nothing on record, the interval counts from
  the day the battery went into service. An open finding that asks for the work makes it due today.
* Charges are counted from the post-charge readings logged over the last CHARGE_WINDOW_DAYS days; with none
  logged, the site's charges per day stands in.
* Due on a day means planned no earlier; overdue means due on an earlier day than today.
* All cells are due after an equalizing charge (read "just equalized") and every `all_cells_every_days`;
  the pilot cell of a flooded battery `pilot_every_days` after the last reading.
"""
import math
from dataclasses import dataclass
from datetime import date, timedelta

from fleetcare import words

EQUALIZE, WATER, ALL_CELLS, PILOT = "equalize", "water", "all_cells", "pilot"
CARED_FOR_STATUSES = ("in_service", "charging", "spare")  # the batteries the plan looks after
CHARGE_WINDOW_DAYS = 28
SLOWEST_CHARGES_PER_DAY = 0.01


@dataclass(frozen=True)
class Trigger:
    """One reason a task falls due, and the day it does."""

    day: date
    why: str


@dataclass(frozen=True)
class Schedule:
    """How often one battery is equalized and watered, and its charges since the last equalizing charge.
    Intervals of None mean "not by that measure"; a battery that may not be equalized (or watered) has both
    equalizing (or its watering) intervals None."""

    equalize_every_days: int | None
    equalize_every_charges: int | None
    water_every_days: int | None
    charges_per_day: float
    charges_since_equalize: int


def takes_equalizing(profile) -> bool:
    return bool(profile.equalizing_allowed)


def takes_water(profile) -> bool:
    return bool(profile.is_flooded and profile.watering_allowed)


def charge_pace(logged_dates, last_equalized, today, site_charges_per_day):
    """(charges per day, charges since the last equalizing charge) from the post-charge readings logged in the
    last CHARGE_WINDOW_DAYS days (their local dates), else from the site's charges per day."""
    if logged_dates:
        per_day = len(logged_dates) / CHARGE_WINDOW_DAYS
        since = len(logged_dates) if last_equalized is None else sum(1 for d in logged_dates if d > last_equalized)
    else:
        per_day = float(site_charges_per_day) or 1.0
        since = 0 if last_equalized is None else math.floor((today - last_equalized).days * per_day)
    return max(per_day, SLOWEST_CHARGES_PER_DAY), since


def schedule(settings, can_equalize, can_water, logged_dates, last_equalized, today, site_charges_per_day):
    """The battery's Schedule from its planning settings and the charges logged."""
    per_day, since = charge_pace(logged_dates, last_equalized, today, site_charges_per_day)
    water_days = int(settings.water_every_days) or None
    water_charges = int(settings.water_every_charges) or None
    if water_charges:
        by_charges = math.ceil(water_charges / per_day)
        water_days = min(water_days, by_charges) if water_days else by_charges
    return Schedule(
        equalize_every_days=(int(settings.equalize_every_days) or None) if can_equalize else None,
        equalize_every_charges=(int(settings.equalize_every_charges) or None) if can_equalize else None,
        water_every_days=water_days if can_water else None,
        charges_per_day=round(per_day, 4),
        charges_since_equalize=since,
    )


def equalize_interval_days(every_days, every_charges, charges_per_day):
    """Days between equalizing charges once one is done: the sooner of the day and the charge interval."""
    intervals = []
    if every_days:
        intervals.append(every_days)
    if every_charges:
        intervals.append(math.ceil(every_charges / charges_per_day))
    return min(intervals) if intervals else None


def _since(last, in_service, every_days, what):
    if last is not None:
        return Trigger(last + timedelta(days=every_days), f"{what} every {words.count(every_days, 'day')}, last on {last}")
    if in_service is not None:
        return Trigger(in_service + timedelta(days=every_days),
                       f"{what} every {words.count(every_days, 'day')}, none on record since it went into service on {in_service}")
    return None


def equalize_triggers(today, last_equalized, in_service, every_days, every_charges, charges_since, charges_per_day):
    """[Trigger] for the next equalizing charge by days and by charges (findings aside)."""
    found = []
    if every_days:
        trigger = _since(last_equalized, in_service, every_days, "equalizing")
        found.append(trigger or Trigger(today, "no equalizing charge on record"))
    if every_charges:
        left = every_charges - charges_since
        found.append(Trigger(today + timedelta(days=math.ceil(left / charges_per_day)),
                             f"equalizing every {words.count(every_charges, 'charge')}, {charges_since} since the last"))
    return found


def water_triggers(today, last_watered, in_service, every_days):
    """[Trigger] for the next watering by days (findings aside; a charge interval is already in the days)."""
    if not every_days:
        return []
    return [_since(last_watered, in_service, every_days, "watering") or Trigger(today, "no watering on record")]


def due_day(triggers):
    """The day a task falls due: its earliest trigger, or None when nothing makes it due."""
    return min((t.day for t in triggers), default=None)


def days_overdue(due, today):
    """Whole days a task due on `due` is overdue on `today` (0 when due today, later or never)."""
    return 0 if due is None else max(0, (today - due).days)


def equalizing_due(sched, today, last_equalized, in_service):
    """The day the battery's next equalizing charge falls due by its schedule (findings aside), or None."""
    return due_day(equalize_triggers(today, last_equalized, in_service, sched.equalize_every_days,
                                     sched.equalize_every_charges, sched.charges_since_equalize, sched.charges_per_day))


def watering_due(sched, today, last_watered, in_service):
    """The day the battery's next watering falls due by its schedule (findings aside), or None."""
    return due_day(water_triggers(today, last_watered, in_service, sched.water_every_days))


def reading_triggers(today, is_flooded, last_all_cells, last_reading, equalized_since_all_cells, all_cells_every_days,
                     pilot_every_days):
    """[(kind, Trigger)] for the all-cell or pilot reading due by today (never before it is due).
    `equalized_since_all_cells`: the local end of an equalizing charge not yet followed by an all-cell reading."""
    every_all = int(all_cells_every_days) or None
    if equalized_since_all_cells is not None:
        return [(ALL_CELLS, Trigger(equalized_since_all_cells.date(),
                                    f"after the equalizing charge that ended {words.weekday_time(equalized_since_all_cells)}: "
                                    "choose “Just equalized”"))]
    if last_all_cells is None:
        return [(ALL_CELLS, Trigger(today, "no all-cell reading on record"))]
    if every_all and last_all_cells + timedelta(days=every_all) <= today:
        return [(ALL_CELLS, Trigger(last_all_cells + timedelta(days=every_all),
                                    f"every {words.count(every_all, 'day')}, last on {words.day(last_all_cells)}"))]
    every_pilot = int(pilot_every_days) or None
    if is_flooded and every_pilot:
        if last_reading is None:
            return [(PILOT, Trigger(today, "no reading on record"))]
        if last_reading + timedelta(days=every_pilot) <= today:
            return [(PILOT, Trigger(last_reading + timedelta(days=every_pilot),
                                    f"every {words.count(every_pilot, 'day')}, last reading on {words.day(last_reading)}"))]
    return []

"""The findings pass reads only the look-back readings a rule can use (fleetcare.care.detection._recent).

Every rule must give the same answer as on the whole look-back: a seeded fleet with readings at every state
of charge, in every situation, with low levels, top-ups before charge, removals and two findings policies (one site
raises the sulfation and deep-discharge limits) and watering by charges, checked at several moments.
"""
import datetime as dt
import random
from decimal import Decimal

import pytest
from django.db.models import Exists, OuterRef

from fleetcare.care import detection, rules
from fleetcare.care.models import Policy
from fleetcare.fleet.models import Battery
from fleetcare.planner.models import Policy as PlanningPolicy
from fleetcare.readings.models import CellReading, Inspection
from fleetcare.readings.services import remove_inspection
from tests.care.helpers import inspect, water

DAY = dt.timedelta(days=1)
SITUATIONS = ["before_charge", "before_charge", "in_use", "rested", "charged"]


def whole_look_back(data, since, now, charge_window_start):
    """The look-back as the pass read it before: every current reading in it, with its low-level flag."""
    low = CellReading.objects.filter(inspection=OuterRef("pk"), level=CellReading.Level.LOW)
    rows = (Inspection.objects.current()
            .filter(battery_id__in=list(data), taken_at__lte=now, taken_at__gte=since)
            .annotate(has_low_level=Exists(low))
            .order_by("battery_id", "-taken_at", "-pk")
            .values_list(*rules.Reading.FIELDS, "has_low_level"))
    return [rules.Reading(*row) for row in rows]


def seeded_fleet(rng, batteries, user, start, days):
    for day in range(days):
        for battery in batteries:
            when = start + day * DAY + dt.timedelta(hours=rng.randint(0, 20), minutes=rng.randint(0, 59))
            situation = rng.choice(SITUATIONS)
            if rng.random() < 0.25:  # all cells, now and then a low level
                cells = {p: Decimal(str(round(rng.uniform(1.150, 1.290), 3))) for p in range(1, 25)}
                levels = {rng.randint(1, 24): "low"} if rng.random() < 0.3 else {}
                reading = inspect(battery, user, when, situation=situation, cells=cells, levels=levels)
            else:  # the pilot cell, anywhere from flat to full
                sg = Decimal(str(round(rng.uniform(1.140, 1.292), 3)))
                reading = inspect(battery, user, when, situation=situation, scope="pilot",
                                  cells={battery.pilot_cell: sg},
                                  hours_since_charge=rng.choice([None, 1, 30]) if situation == "rested" else None)
            if rng.random() < 0.05:
                remove_inspection(reading, user=user, reason="typed on the wrong battery")
            if rng.random() < (0.3 if battery.site_id != batteries[0].site_id else 0.05):
                water(battery, user, when + dt.timedelta(minutes=5), rng.choice([300, 900]),
                      before_charge=rng.random() < 0.5)


@pytest.mark.django_db
def test_the_rules_answer_as_they_do_on_the_whole_look_back(site, other_site, traction_profile, room, crew,
                                                           monkeypatch):
    rng = random.Random(20261204)
    Policy.objects.create(site=other_site, partial_charge_soc_percent=Decimal("60"),
                          deep_discharge_soc_percent=Decimal("25"), left_discharged_soc_percent=Decimal("60"))
    # Watering by charges counts the post-charge readings of the planner's window.
    PlanningPolicy.objects.create(site=site, water_every_charges=4, water_every_days=30)
    batteries = [Battery.objects.create(serial=f"R-{n}", site=site if n < 4 else other_site, profile=traction_profile,
                                        in_service_date=dt.date(2025, 1, 1)) for n in range(6)]
    now = dt.datetime(2026, 6, 1, 12, tzinfo=dt.UTC)
    seeded_fleet(rng, batteries, crew, now - 75 * DAY, 75)

    fleet = Battery.objects.filter(pk__in=[b.pk for b in batteries])
    read, whole, kinds = 0, 0, set()
    for moment in [now - k * DAY - dt.timedelta(hours=rng.randint(0, 23)) for k in range(0, 40, 3)]:
        found = {d.battery.pk: (rules.detect(d), [r.pk for r in d.recent]) for d in detection.load(fleet, moment)}
        with monkeypatch.context() as patched:
            patched.setattr(detection, "_recent", whole_look_back)
            expected = {d.battery.pk: (rules.detect(d), [r.pk for r in d.recent])
                        for d in detection.load(fleet, moment)}
        for pk, (detected, recent) in found.items():
            assert detected == expected[pk][0], (pk, moment)
            assert set(recent) <= set(expected[pk][1])
            read, whole = read + len(recent), whole + len(expected[pk][1])
            kinds |= {d.kind for d in detected}
    # The fleet exercises the rules that read the look-back, and the pass reads less of it.
    assert {"sulfation", "deep_discharge", "left_discharged", "water_before_charge", "watering_overdue"} <= kinds
    assert read < whole


@pytest.mark.django_db
def test_cells_read_as_arrays_are_the_cells_read_row_by_row(site, traction_profile, room, crew):
    """On PostgreSQL the pass reads each reading's cells as arrays (fleetcare.care.detection.cells_of); they
    must be the cells, in position order, that the row-by-row read gives (SQLite reads row by row)."""
    rng = random.Random(7)
    battery = Battery.objects.create(serial="C-1", site=site, profile=traction_profile, in_service_date=dt.date(2025, 1, 1))
    start = dt.datetime(2026, 5, 1, 8, tzinfo=dt.UTC)
    readings = [
        inspect(battery, crew, start + n * DAY, cells={p: Decimal(str(round(rng.uniform(1.150, 1.290), 3)))
                                                        for p in rng.sample(range(1, 25), rng.randint(1, 24))},
                levels={rng.randint(1, 24): "low"})
        for n in range(6)
    ] + [inspect(battery, crew, start + 7 * DAY, volts={1: "12.71", 2: "12.64"})]
    ids = [r.pk for r in readings] + [10 ** 9]  # and one that does not exist
    by_rows = detection.cells_of_by_rows(ids)
    assert detection.cells_of(ids) == by_rows
    assert [c.position for c in by_rows[readings[0].pk]] == sorted(c.position for c in by_rows[readings[0].pk])
    assert len(by_rows) == len(readings)

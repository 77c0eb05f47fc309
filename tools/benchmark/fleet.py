"""A synthetic fleet on PostgreSQL: years of weekly all-cell and daily pilot-cell readings per battery (three by default).

The few hundred fleet rows go through the ORM; the millions of reading rows are made by PostgreSQL
itself (generate_series), with the summary fields computed by SQL expressions equal to
fleetcare.readings.services.summarise + fleetcare.chemistry:

* corrected SG = round(observed + coefficient x (temp - reference), 3)      (chemistry.corrected_sg)
* mean, lowest, highest, spread, first position of the lowest                (chemistry.sg_stats)
* SOC = round(clamp(100 x (mean - discharged) / (full - discharged)), 1)    (chemistry.soc_from_sg)

Python rounds a float where SQL rounds an exact decimal, so the two could differ on an exact tie
(x.xxx5). The data avoid ties: no temperature 5.0 or 15.0 °C away from the reference, and an
all-cell reading whose corrected sum would put its mean or SOC on a tie has its last cell moved one
point. verify_sample() recomputes a sample with the Python functions and counts disagreements.
"""
import datetime as dt
import math
import random
from decimal import Decimal

from django.db import connection, transaction
from django.utils import timezone

from fleetcare.accounts.roles import CREW, MANAGER, SUPERVISOR, ensure_groups
from fleetcare.care.detection import detect_fleet
from fleetcare.fleet.models import Battery, BatteryProfile, ChargingRoom, Fitting, ShiftWindow, Site, Vehicle
from fleetcare.readings import state
from fleetcare.readings.models import CellReading, Inspection
from fleetcare.readings.services import CellEntry, build_cells, summarise

DAYS = 3 * 365  # the default history; build(days=...) makes another length
CELLS = 24
BATTERIES_PER_SITE = 100
PASSWORD = "bench-only-password-7"
WEAK_EVERY = 25  # every 25th battery grows a weak cell 9
TABLES = [
    "readings_cellreading", "readings_inspection", "readings_watertopup", "fleet_fitting", "fleet_vehicle",
    "fleet_battery", "fleet_shiftwindow", "fleet_chargingroom", "fleet_site_members", "fleet_site",
    "fleet_batteryprofile",
]


class Fleet:
    """What a generated fleet consists of, for the measurements."""

    def __init__(self, size, sites, profile, supervisor, crew, manager, batteries, inspections, cells, days=DAYS):
        self.size, self.sites, self.profile, self.days = size, sites, profile, days
        self.supervisor, self.crew, self.manager = supervisor, crew, manager
        self.batteries, self.inspections, self.cells = batteries, inspections, cells


def reset():
    """Empty every fleet and reading table (and whatever refers to them) in the benchmark database."""
    with connection.cursor() as cursor:
        existing = set(connection.introspection.table_names(cursor))
        tables = [t for t in TABLES if t in existing]
        cursor.execute(f"TRUNCATE {', '.join(tables)} RESTART IDENTITY CASCADE")


def build(size, user_model, days=DAYS):
    """Generate a fleet of `size` 24-cell batteries with `days` days of readings up to yesterday."""
    reset()
    rng = random.Random(size)
    groups = ensure_groups()
    users = {}
    for name, role in (("bench-supervisor", SUPERVISOR), ("bench-crew", CREW), ("bench-manager", MANAGER)):
        user = user_model.objects.filter(username=name).first() or user_model.objects.create_user(name, password=PASSWORD)
        user.groups.set([groups[role]])
        users[role] = user
    profile = BatteryProfile.objects.create(
        name="48 V 24-cell 775 Ah (benchmark)", technology="flooded", application="traction", nominal_voltage=48,
        monoblocks=1, cells_per_block=CELLS, capacity_ah=775, full_charge_sg=Decimal("1.290"),
        discharged_sg=Decimal("1.140"), unit_price=Decimal("7800"), weight_kg=Decimal("1350"),
    )
    start = (timezone.now() - dt.timedelta(days=days)).replace(hour=0, minute=0, second=0, microsecond=0)
    # Ages and wear are counted from DAYS before today whatever the history's length, so fleets with
    # one, three or six years of history look the same today and differ only in how much lies behind.
    recent_start = (timezone.now() - dt.timedelta(days=DAYS)).replace(hour=0, minute=0, second=0, microsecond=0)
    sites, rooms = [], []
    for n in range(math.ceil(size / BATTERIES_PER_SITE)):
        site = Site.objects.create(name=f"Bench warehouse {n + 1}", code=f"bench-{n + 1}", timezone="UTC",
                                   charges_per_day=Decimal("1"), spares_reserve=1)
        site.members.add(*users.values())
        rooms.append(ChargingRoom.objects.create(site=site, name="Charging room", chargers=12, equalizing_chargers=4,
                                                 airflow_m3h=Decimal("400")))
        ShiftWindow.objects.create(site=site, name="Night", starts_at=dt.time(22, 0), hours=Decimal("8"))
        sites.append(site)
    batteries = Battery.objects.bulk_create([
        Battery(serial=f"B{n + 1:05d}", profile=profile, site=sites[n // BATTERIES_PER_SITE],
                charging_room=rooms[n // BATTERIES_PER_SITE],
                in_service_date=(recent_start - dt.timedelta(days=rng.randint(0, 700))).date(),
                status=Battery.Status.SPARE if n % 10 == 9 else Battery.Status.IN_SERVICE)
        for n in range(size)
    ])
    vehicles = Vehicle.objects.bulk_create([
        Vehicle(asset_number=f"T{n + 1:05d}", kind=Vehicle.Kind.COUNTERBALANCE, site=b.site)
        for n, b in enumerate(batteries) if b.status == Battery.Status.IN_SERVICE
    ])
    in_service = [b for b in batteries if b.status == Battery.Status.IN_SERVICE]
    Fitting.objects.bulk_create([Fitting(battery=b, vehicle=v, fitted_at=start) for b, v in zip(in_service, vehicles)])
    inspections, cells = _readings(start, profile, users[CREW], days)
    _top_ups(start, users[CREW], days)
    # Statistics first, as autovacuum would give a loaded table: without them PostgreSQL may plan the rebuild's
    # per-battery look-ups over the partial index of current readings by time instead of the battery's own.
    with connection.cursor() as cursor:
        for table in ("readings_inspection", "readings_cellreading", "readings_watertopup", "fleet_battery"):
            cursor.execute(f"ANALYZE {table}")
    with transaction.atomic():  # the rebuild locks the battery rows it recomputes
        state.rebuild()
    # A fleet in use has its findings: the first pass runs here, so every part is measured on the same fleet in every
    # round (the findings pass below is measured as it runs again, day after day).
    detect_fleet(answer=False)
    # A steady-state database, not a freshly loaded one: set hint bits and the visibility map, refresh the
    # statistics of every table, as autovacuum would (the findings, the monthly totals and the site members had
    # none, and PostgreSQL planned the overview's counts for a few batteries instead of ten thousand). VACUUM
    # cannot run inside a transaction, as in a test: there only ANALYZE.
    command = "ANALYZE" if connection.in_atomic_block else "VACUUM ANALYZE"
    with connection.cursor() as cursor:
        cursor.execute(command)
    return Fleet(size, sites, profile, users[SUPERVISOR], users[CREW], users[MANAGER], batteries, inspections, cells,
                 days)


def _readings(start, profile, crew, days):
    """Weekly all-cell readings after charge, daily pilot-cell readings before charge, all in SQL."""
    params = {
        "start": start, "days": days, "shift": days - DAYS, "cells": CELLS, "crew": crew.pk, "weak_every": WEAK_EVERY,
        "ref": profile.sg_reference_temp_c, "coef": profile.sg_coefficient_per_c,
        "full": profile.full_charge_sg, "empty": profile.discharged_sg, "chosen_via": Inspection.ChosenVia.UNKNOWN.value,
    }
    with transaction.atomic(), connection.cursor() as cursor:
        cursor.execute("SET LOCAL synchronous_commit = off")
        cursor.execute("DROP TABLE IF EXISTS bench_plan")
        # One row per inspection, ids chosen here so the cells can be written first.
        cursor.execute("""
            CREATE UNLOGGED TABLE bench_plan AS
            WITH b AS (SELECT id, row_number() OVER (ORDER BY id) - 1 AS k FROM fleet_battery)
            SELECT b.k * %(days)s + d + 1 AS id, b.id AS battery_id, b.k, d,
                   %(start)s::timestamptz + d * interval '1 day' + interval '6 hours' + (b.k %% 120) * interval '1 minute' AS taken_at,
                   CASE WHEN d %% 7 = 0 THEN 'all' ELSE 'pilot' END AS scope,
                   CASE WHEN d %% 7 = 0 THEN 'charged' ELSE 'before_charge' END AS situation,
                   CASE WHEN t IN (20.0, 30.0) THEN t + 0.1 ELSE t END::numeric(4, 1) AS temp
            FROM b CROSS JOIN generate_series(0, %(days)s - 1) AS d
            CROSS JOIN LATERAL (SELECT 18.0 + ((b.k * 7919 + d * 104729) %% 171) / 10.0 AS t) AS tt
        """, params)
        cursor.execute("ALTER TABLE bench_plan ADD PRIMARY KEY (id)")
        # True SG: full charge, minus ageing, a fixed offset per cell, noise, a weak cell 9 on every
        # 25th battery; pilot readings are before charge, 25-75 % discharged. Observed = true SG less
        # the temperature effect, so the corrected value lands back near the truth.
        cursor.execute("""
            INSERT INTO readings_cellreading (inspection_id, position, sg, sg_corrected, temp_c, volts, level)
            SELECT id, position, sg, round(sg + %(coef)s * (temp - %(ref)s), 3), NULL, NULL, 'ok'
            FROM (
                SELECT p.id, c.position, p.temp,
                       least(1.320, greatest(1.100, round((
                           %(full)s - 0.00002 * (p.d - %(shift)s)
                           + (((p.k * 31 + c.position * 17) %% 9) - 4) * 0.001
                           + (random() - 0.5) * 0.004
                           - CASE WHEN p.k %% %(weak_every)s = 0 AND c.position = 9 THEN 0.00005 * greatest(0, p.d - %(shift)s) ELSE 0 END
                           - CASE WHEN p.scope = 'pilot'
                                  THEN (%(full)s - %(empty)s) * (0.25 + 0.5 * ((p.k * 13 + p.d * 7) %% 100) / 100.0)
                                  ELSE 0 END
                           - %(coef)s * (p.temp - %(ref)s))::numeric, 3)))::numeric(5, 3) AS sg
                FROM bench_plan p
                CROSS JOIN LATERAL generate_series(1, CASE WHEN p.scope = 'all' THEN %(cells)s ELSE 1 END) AS c(position)
            ) AS g
        """, params)
        cells = cursor.rowcount
        # Keep every all-cell mean and SOC off an exact rounding tie (see the module docstring).
        cursor.execute("""
            UPDATE readings_cellreading r
               SET sg = r.sg + s.step, sg_corrected = r.sg_corrected + s.step
              FROM (SELECT inspection_id,
                           CASE WHEN max(sg) FILTER (WHERE position = %(cells)s) >= 1.320 THEN -0.001 ELSE 0.001 END AS step
                      FROM readings_cellreading
                     GROUP BY inspection_id
                    HAVING count(*) = %(cells)s
                       AND (round(sum(sg_corrected) * 1000) %% 24 = 12 OR round(sum(sg_corrected) * 1000) %% 18 = 9)) AS s
             WHERE r.inspection_id = s.inspection_id AND r.position = %(cells)s
        """, params)
        cursor.execute("""
            INSERT INTO readings_inspection (
                id, battery_id, taken_at, taken_by_id, situation, scope, temp_c, hydrometer_compensated,
                hours_since_charge, notes, client_uuid, sg_mean, sg_min, sg_max, sg_spread, lowest_position,
                volts_total, soc_percent, soc_basis, is_current, supersedes_id, revision_reason, recorded_at,
                deleted_at, deleted_by_id, chosen_via, client_digest)
            SELECT p.id, p.battery_id, p.taken_at, %(crew)s, p.situation, p.scope, p.temp, false,
                   NULL, '', md5('bench-' || p.id)::uuid, round(s.mean, 3), s.lowest, s.highest, s.highest - s.lowest,
                   s.lowest_position, NULL,
                   round(greatest(0, least(100, 100 * (s.mean - %(empty)s) / (%(full)s - %(empty)s))), 1), 'sg',
                   true, NULL, '', p.taken_at, NULL, NULL, %(chosen_via)s, ''
            FROM bench_plan p
            JOIN (SELECT inspection_id, avg(sg_corrected) AS mean, min(sg_corrected) AS lowest,
                         max(sg_corrected) AS highest,
                         (array_agg(position ORDER BY sg_corrected, position))[1] AS lowest_position
                    FROM readings_cellreading GROUP BY inspection_id) AS s ON s.inspection_id = p.id
        """, params)
        inspections = cursor.rowcount
        cursor.execute(BEHIND_MEDIAN_SQL)
        cursor.execute("SELECT setval(pg_get_serial_sequence('readings_inspection', 'id'), (SELECT max(id) FROM readings_inspection))")
        cursor.execute("DROP TABLE bench_plan")
    return inspections, cells


# The spread rule's measure (summarise: chemistry.furthest_below_median_of_others_sg) in SQL: the furthest-behind
# cell is the lowest, and the others' median is the median of the cells without it.
BEHIND_MEDIAN_SQL = """
    UPDATE readings_inspection i SET sg_behind_median = round((s.middle - s.lowest)::numeric, 4)
      FROM (SELECT inspection_id, min(sg_corrected) AS lowest,
                   percentile_cont(0.5) WITHIN GROUP (ORDER BY sg_corrected) FILTER (WHERE rn > 1) AS middle
              FROM (SELECT inspection_id, sg_corrected,
                           row_number() OVER (PARTITION BY inspection_id ORDER BY sg_corrected, position) AS rn
                      FROM readings_cellreading WHERE sg_corrected IS NOT NULL) AS c
             GROUP BY inspection_id HAVING count(*) > 1) AS s
     WHERE i.id = s.inspection_id AND i.scope = 'all'
"""


def _top_ups(start, crew, days):
    """Weekly water after charge, about 150 mL a cell."""
    with connection.cursor() as cursor:
        cursor.execute("""
            INSERT INTO readings_watertopup (battery_id, done_at, done_by_id, volume_ml, volume_entered, before_charge,
                                             water_type, notes, client_uuid, recorded_at, deleted_at, client_digest)
            SELECT b.id, %(start)s::timestamptz + w * interval '7 days' + interval '7 hours', %(crew)s,
                   (3600 + (b.id * 37 + w * 11) %% 600)::numeric(8, 1), '', false, 'distilled', '',
                   md5('bench-water-' || b.id || '-' || w)::uuid, now(), NULL, ''
            FROM fleet_battery b CROSS JOIN generate_series(0, %(weeks)s - 1) AS w
        """, {"start": start, "crew": crew.pk, "weeks": days // 7})


def verify_sample(count=300, seed=7):
    """Recompute the summary of a sample of stored inspections with the Python code; return disagreements."""
    ids = list(Inspection.objects.values_list("id", flat=True).order_by("id"))
    sample = random.Random(seed).sample(ids, min(count, len(ids)))
    fields = ("sg_mean", "sg_min", "sg_max", "sg_spread", "sg_behind_median", "lowest_position", "soc_percent",
              "soc_basis")
    mismatches = []
    stored = Inspection.objects.filter(id__in=sample).select_related("battery__profile")
    cells_by = {}
    for cell in CellReading.objects.filter(inspection_id__in=sample).order_by("inspection_id", "position"):
        cells_by.setdefault(cell.inspection_id, []).append(cell)
    for inspection in stored:
        rows = cells_by[inspection.id]
        entries = [CellEntry(position=c.position, sg=c.sg) for c in rows]
        fresh = Inspection(battery=inspection.battery, situation=inspection.situation, scope=inspection.scope,
                           temp_c=inspection.temp_c)
        rebuilt = build_cells(fresh, entries)
        summarise(fresh, rebuilt)
        wrong = [f for f in fields if getattr(fresh, f) != getattr(inspection, f)]
        wrong += [f"cell {a.position} corrected" for a, b in zip(rows, rebuilt) if a.sg_corrected != b.sg_corrected]
        if wrong:
            mismatches.append((inspection.id, wrong))
    return len(sample), mismatches

"""Each measurement beside its reference, taken in the same run on the same data."""
import csv
import datetime as dt
import io
import statistics
import time
import uuid
from decimal import Decimal

from django.db import connection, transaction
from django.test import Client
from django.test.utils import CaptureQueriesContext
from django.urls import reverse
from django.utils import timezone

from fleetcare.care.detection import detect_fleet
from fleetcare.fleet.models import Battery
from fleetcare.readings import csv_io
from fleetcare.readings.models import Inspection

IMPORT_RUNS = 3  # files imported one after the other; the median run is reported


def median_ms(fn, repeat):
    """Median wall time of fn() in milliseconds over `repeat` runs, after one warm-up run."""
    fn()
    times = []
    for _ in range(repeat):
        started = time.perf_counter()
        fn()
        times.append((time.perf_counter() - started) * 1000)
    return statistics.median(times)


def query_count(fn):
    with CaptureQueriesContext(connection) as captured:
        fn()
    return len(captured.captured_queries)


def page(user, path):
    client = Client()
    client.force_login(user)

    def get():
        response = client.get(path)
        if response.status_code != 200:
            raise AssertionError(f"GET {path} answered {response.status_code}")
        if getattr(response, "streaming", False):
            b"".join(response.streaming_content)
        return response

    return get


VISIBLE = "SELECT b.id FROM fleet_battery b WHERE b.status <> 'retired' AND b.site_id IN (SELECT site_id FROM fleet_site_members WHERE user_id = %(user)s)"
CURRENT = "i.is_current AND i.deleted_at IS NULL"

# One statement per thing the overview shows, written by hand, each using the indexes at hand.
DASHBOARD_SQL = {
    # The count table: per site, batteries by status, by SOC band at their latest reading, overdue
    # equalizing and watering (nothing logged in 7 days) and past design life; and the 5 widest spreads.
    "counts": f"""
        WITH r AS MATERIALIZED (
            SELECT b.id, b.serial, b.site_id, b.status,
                   (SELECT i.soc_percent FROM readings_inspection i WHERE i.battery_id = b.id AND {CURRENT}
                     ORDER BY i.taken_at DESC LIMIT 1) AS soc,
                   (SELECT i.sg_spread FROM readings_inspection i WHERE i.battery_id = b.id AND {CURRENT}
                       AND i.situation IN ('charged', 'equalized') AND i.scope = 'all' AND i.sg_spread IS NOT NULL
                     ORDER BY i.taken_at DESC LIMIT 1) AS spread,
                   p.technology = 'flooded' AND p.equalizing_allowed AND NOT EXISTS (
                       SELECT 1 FROM readings_inspection i WHERE i.battery_id = b.id AND {CURRENT}
                          AND i.situation = 'equalized' AND i.taken_at >= %(care_since)s) AS overdue_eq,
                   p.technology = 'flooded' AND p.watering_allowed AND NOT EXISTS (
                       SELECT 1 FROM readings_watertopup w WHERE w.battery_id = b.id AND w.deleted_at IS NULL
                          AND w.done_at >= %(care_since)s) AS overdue_water,
                   b.in_service_date + round(p.design_life_years * 365.25)::int <= %(today)s AS past_life
              FROM fleet_battery b JOIN fleet_batteryprofile p ON p.id = b.profile_id
             WHERE b.id IN ({VISIBLE}))
        SELECT 'status', site_id::text, status, count(*)::numeric FROM r GROUP BY site_id, status
        UNION ALL
        SELECT 'soc', site_id::text, CASE WHEN soc IS NULL THEN 'none' WHEN soc < 20 THEN 'below20'
                   WHEN soc < 50 THEN '20to50' WHEN soc < 80 THEN '50to80' ELSE '80up' END, count(*) FROM r GROUP BY 2, 3
        UNION ALL
        SELECT 'care', site_id::text, 'equalizing', count(*) FILTER (WHERE overdue_eq) FROM r GROUP BY site_id
        UNION ALL
        SELECT 'care', site_id::text, 'watering', count(*) FILTER (WHERE overdue_water) FROM r GROUP BY site_id
        UNION ALL
        SELECT 'care', site_id::text, 'past_life', count(*) FILTER (WHERE past_life) FROM r GROUP BY site_id
        UNION ALL
        (SELECT 'widest', id::text, serial, spread FROM r WHERE spread IS NOT NULL ORDER BY spread DESC, serial LIMIT 5)
    """,
    "open_findings": f"""
        SELECT b.site_id, f.kind, count(DISTINCT f.battery_id) FROM care_finding f JOIN fleet_battery b ON b.id = f.battery_id
         WHERE f.state IN ('open', 'acknowledged') AND f.battery_id IN ({VISIBLE}) GROUP BY 1, 2
    """,
    "findings_per_week": f"""
        SELECT 'opened', date_trunc('week', opened_at), count(*) FROM care_finding
         WHERE opened_at >= %(weeks_from)s AND battery_id IN ({VISIBLE}) GROUP BY 2
        UNION ALL
        SELECT 'cleared', date_trunc('week', cleared_at), count(*) FROM care_finding
         WHERE cleared_at >= %(weeks_from)s AND battery_id IN ({VISIBLE}) GROUP BY 2
    """,
    "water_per_month": f"""
        SELECT w.battery_id, date_trunc('month', w.done_at), sum(w.volume_ml) FROM readings_watertopup w
         WHERE w.deleted_at IS NULL AND w.done_at >= %(months_from)s AND w.done_at < %(months_to)s
           AND w.battery_id IN ({VISIBLE}) GROUP BY 1, 2
    """,
    "deep_discharge": f"""
        SELECT coalesce(v.asset_number, 'Not fitted'), coalesce(nullif(f.shift, ''), 'No shift set'), count(*)
          FROM readings_inspection i
          LEFT JOIN LATERAL (SELECT f.vehicle_id, f.shift FROM fleet_fitting f
                              WHERE f.battery_id = i.battery_id AND f.fitted_at <= i.taken_at
                                AND (f.removed_at IS NULL OR f.removed_at > i.taken_at)
                              ORDER BY f.fitted_at DESC LIMIT 1) AS f ON true
          LEFT JOIN fleet_vehicle v ON v.id = f.vehicle_id
         WHERE {CURRENT} AND i.taken_at >= %(deep_since)s AND i.soc_percent < 20
           AND i.battery_id IN ({VISIBLE})
         GROUP BY 1, 2
    """,
    "spread_series": f"""
        SELECT i.battery_id, i.taken_at, i.sg_spread FROM readings_inspection i
         WHERE i.battery_id = ANY(%(widest)s) AND {CURRENT} AND i.situation IN ('charged', 'equalized')
           AND i.scope = 'all' AND i.sg_spread IS NOT NULL AND i.taken_at >= %(spread_since)s
         ORDER BY i.taken_at
    """,
}


def dashboard_reference(user, now=None):
    """Run the hand-written statements; returns {name: rows}."""
    now = now or timezone.now()
    month = now.replace(day=1, hour=0, minute=0, second=0, microsecond=0)
    months_from = month
    for _ in range(12):
        months_from = (months_from - dt.timedelta(days=1)).replace(day=1)
    monday = (now - dt.timedelta(days=now.weekday())).replace(hour=0, minute=0, second=0, microsecond=0)
    params = {
        "user": user.pk, "today": timezone.localdate(now), "care_since": now - dt.timedelta(days=7),
        "weeks_from": monday - dt.timedelta(weeks=25), "months_from": months_from, "months_to": month,
        "deep_since": now - dt.timedelta(days=90), "spread_since": now - dt.timedelta(weeks=26),
    }
    out = {}
    with connection.cursor() as cursor:
        for name, sql in DASHBOARD_SQL.items():
            if name == "spread_series":
                params["widest"] = [int(row[1]) for row in out["counts"] if row[0] == "widest"]
            cursor.execute(sql, params)
            out[name] = cursor.fetchall()
    return out


def dashboard(fleet, repeat):
    """The supervisor's overview page against hand-written SQL giving the same numbers.

    The reference runs one statement per part of the page (count table, open findings, findings per
    week, water per battery and month, deep discharge by truck and shift, the widest spreads over
    time) for every active battery the supervisor may see; the page's own session and user queries
    are not in it.
    """
    get = page(fleet.supervisor, "/")
    rows = dashboard_reference(fleet.supervisor)
    return {
        "ms": median_ms(get, repeat), "queries": query_count(get),
        "reference_ms": median_ms(lambda: dashboard_reference(fleet.supervisor), repeat),
        "reference": f"hand-written SQL, {len(DASHBOARD_SQL)} statements",
        "reference_rows": sum(len(r) for r in rows.values()),
    }


def battery_record(fleet, repeat):
    """One battery's record page with its full three-year history."""
    battery = Battery.objects.order_by("serial").first()
    get = page(fleet.supervisor, f"/batteries/{battery.pk}/")
    history = Inspection.objects.current().filter(battery=battery).count()
    return {"ms": median_ms(get, repeat), "queries": query_count(get), "serial": battery.serial, "inspections": history}


def findings_pass(fleet, repeat):
    """The whole-fleet findings pass: fleetcare.care.detection.detect_fleet, as it runs day after day: one pass
    is stored first (untimed), so the timed passes refresh the findings it opened rather than open them all anew.
    Stored, not listed (answer=False), as the worker's "check now" and the findings command run it."""
    now = timezone.now()
    detect_fleet(now=now, answer=False)

    def run():
        with transaction.atomic():
            result = detect_fleet(now=now, answer=False)
            transaction.set_rollback(True)  # every repeat starts from the same state
        return result

    return {"ms": median_ms(run, max(1, repeat // 2)), "queries": query_count(run)}


def timed_page(user, path, repeat):
    """A page's median time over `repeat` runs and its query count, as `user`."""
    get = page(user, path)
    return {"ms": median_ms(get, repeat), "queries": query_count(get), "path": path}


def site_plan(fleet, repeat):
    """A site's equalizing and watering plan, through the week page that shows it."""
    return timed_page(fleet.supervisor, reverse("planner:plan", args=[fleet.sites[0].code]), max(1, repeat // 2))


def battery_list(fleet, repeat):
    """The supervisor's battery list, first page, every site."""
    return timed_page(fleet.supervisor, reverse("fleet:batteries"), repeat)


def today(fleet, repeat):
    """A site's work for today, as the crew opens it."""
    return timed_page(fleet.crew, reverse("planner:today", args=[fleet.sites[0].code]), repeat)


def api_status(fleet, repeat):
    """The API's status of one battery (what a tablet asks before a reading)."""
    battery = Battery.objects.order_by("serial").first()
    return timed_page(fleet.crew, f"/api/batteries/{battery.pk}/status", repeat)


def budget_page(fleet, repeat):
    """The manager's replacement budget page."""
    return timed_page(fleet.manager, reverse("budget:home"), max(1, repeat // 2))


def budget_export(fleet, repeat):
    """The manager's replacement budget as XLSX."""
    return timed_page(fleet.manager, reverse("budget:export_xlsx"), max(1, repeat // 2))


def _import_rows(fleet, batteries, readings_each, minute=0):
    """(CSV text, cell rows) for `readings_each` new all-cell readings per battery, at times no generated reading uses."""
    out = io.StringIO()
    writer = csv.writer(out)
    writer.writerow(csv_io.COLUMNS)
    rows = []
    base = timezone.now().replace(minute=0, second=0, microsecond=0) - dt.timedelta(days=readings_each + 1)
    for b_index, battery in enumerate(batteries):
        for r in range(readings_each):
            taken = (base + dt.timedelta(days=r, hours=8, minutes=b_index % 50 + minute)).strftime("%Y-%m-%dT%H:%M:%S+00:00")
            temp = 20 + (b_index + r) % 12
            for position in range(1, 25):
                sg = f"1.{270 + (b_index * 7 + r * 3 + position * 5) % 25:03d}"
                row = [battery.serial, taken, "charged", position, sg, temp, "", "ok"]
                writer.writerow(row)
                rows.append(row)
    return out.getvalue(), rows


def csv_import(fleet, batteries=100, readings_each=20, first_minute=1):
    """CSV import throughput (cell readings per second) against PostgreSQL COPY of the same rows.

    COPY writes the same inspections (with their summary) and the same cell rows in one transaction
    and commits (then they are deleted again, untimed); the import runs the real code path (parse, check, compute, store, on-commit
    findings pass) on IMPORT_RUNS files of the same shape at new times, and the median run counts.
    """
    chosen = list(Battery.objects.select_related("profile", "site").order_by("serial")[:batteries])
    text, rows = _import_rows(fleet, chosen, readings_each)
    by_serial = {b.serial: b for b in chosen}
    inspections_csv, cells_csv = io.StringIO(), io.StringIO()
    with connection.cursor() as cursor:
        cursor.execute("SELECT coalesce(max(id), 0) + 1000000 FROM readings_inspection")
        next_id = cursor.fetchone()[0]
    ids = {}
    chosen_via = Inspection.ChosenVia.UNKNOWN.value
    for serial, taken, situation, position, sg, temp, _, level in rows:
        key = (serial, taken)
        if key not in ids:
            ids[key] = next_id
            next_id += 1
            battery = by_serial[serial]
            inspections_csv.write(
                f"{ids[key]}\t{battery.pk}\t{taken}\t{fleet.crew.pk}\t{situation}\tall\t{temp}\tf\t\\N\tImported from CSV\t"
                f"{uuid.uuid4()}\t1.280\t1.270\t1.294\t0.024\t1\t\\N\t93.3\tsg\tt\t\\N\t\t{taken}\t\\N\t\\N\t{chosen_via}\t\t0.0120\n"
            )
        corrected = (Decimal(sg) + Decimal("0.0007") * (Decimal(temp) - 25)).quantize(Decimal("0.001"))
        cells_csv.write(f"{ids[key]}\t{position}\t{sg}\t{corrected}\t\\N\t\\N\t{level}\n")
    inspection_columns = (
        "id, battery_id, taken_at, taken_by_id, situation, scope, temp_c, hydrometer_compensated, hours_since_charge, "
        "notes, client_uuid, sg_mean, sg_min, sg_max, sg_spread, lowest_position, volts_total, soc_percent, soc_basis, "
        "is_current, supersedes_id, revision_reason, recorded_at, deleted_at, deleted_by_id, chosen_via, client_digest, "
        "sg_behind_median"
    )

    first_id = min(ids.values())

    def copy():
        """COPY both tables and commit, as an import that stores its rows must; returns the time taken."""
        inspections_csv.seek(0)
        cells_csv.seek(0)
        started = time.perf_counter()
        with transaction.atomic(), connection.cursor() as cursor:
            cursor.copy_expert(f"COPY readings_inspection ({inspection_columns}) FROM STDIN", inspections_csv)
            cursor.copy_expert(
                "COPY readings_cellreading (inspection_id, position, sg, sg_corrected, temp_c, volts, level) FROM STDIN",
                cells_csv,
            )
        elapsed = (time.perf_counter() - started) * 1000
        with transaction.atomic(), connection.cursor() as cursor:  # not timed: put the database back
            cursor.execute("DELETE FROM readings_cellreading WHERE inspection_id >= %s", [first_id])
            cursor.execute("DELETE FROM readings_inspection WHERE id >= %s", [first_id])
        # Deleted rows stay behind as dead index entries until vacuumed; left there, they cost the
        # import's findings queries tens of milliseconds of planning (PostgreSQL probes the ends of
        # the taken_at indexes).
        with connection.cursor() as cursor:
            for model in (Inspection, csv_io.CellReading):
                cursor.execute(f"VACUUM {model._meta.db_table}")
        return elapsed

    copy()  # warm-up
    copy_ms = statistics.median(copy() for _ in range(3))
    runs = []
    for attempt in range(IMPORT_RUNS):
        text, _rows = _import_rows(fleet, chosen, readings_each, minute=first_minute + attempt)  # new readings each time
        # The import commits on its own; wrapped in one more atomic block, the commit and the on-commit
        # receivers (one findings pass for the imported batteries) run at its end. A callback registered
        # first runs first after the commit, so it marks where the commit ends and the findings begin.
        committed = []
        started = time.perf_counter()
        with transaction.atomic():
            transaction.on_commit(lambda: committed.append(time.perf_counter()))
            report = csv_io.import_readings(text, user=fleet.crew, batteries=Battery.objects.all())
            stored = time.perf_counter()
        finished = time.perf_counter()
        if not report.imported or report.errors or report.inspections_created != len(ids):
            raise AssertionError(f"the generated CSV did not import: {report.errors[:3]}")
        runs.append(tuple((moment - started) * 1000 for moment in (finished, stored, committed[0])))
    import_ms, store_ms, committed_ms = sorted(runs)[len(runs) // 2]
    cells = len(rows)
    return {
        "cells": cells, "inspections": len(ids), "import_runs_ms": [round(run[0]) for run in runs],
        "import_ms": import_ms, "import_cells_per_s": cells / import_ms * 1000,
        "copy_ms": copy_ms, "copy_cells_per_s": cells / copy_ms * 1000,
        "ratio": copy_ms / import_ms,
        "parse_and_store_ms": store_ms, "commit_ms": committed_ms - store_ms, "findings_ms": import_ms - committed_ms,
        "without_findings_ratio": copy_ms / committed_ms,
    }

"""Each measurement beside its reference, taken in the same run on the same data.

A part whose feature is not in the code yet answers NotAvailable with the reason; nothing is faked.
"""
import csv
import datetime as dt
import importlib
import inspect
import io
import statistics
import time
import uuid
from decimal import Decimal

from django.db import connection, transaction
from django.test import Client
from django.test.utils import CaptureQueriesContext
from django.urls import NoReverseMatch, reverse
from django.utils import timezone

from fleetcare.fleet.models import Battery
from fleetcare.readings import csv_io
from fleetcare.readings.models import Inspection


class NotAvailable(Exception):
    """The feature this part measures does not exist (yet)."""


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


DASHBOARD_SQL = """
SELECT b.id, b.serial, l.soc_percent, l.sg_spread, l.taken_at, l.situation,
       CASE WHEN l.soc_percent IS NULL THEN 'no reading' WHEN l.soc_percent < 20 THEN '0-20'
            WHEN l.soc_percent < 50 THEN '20-50' WHEN l.soc_percent < 80 THEN '50-80' ELSE '80-100' END AS band
  FROM fleet_battery b
  LEFT JOIN LATERAL (
        SELECT i.soc_percent, i.sg_spread, i.taken_at, i.situation
          FROM readings_inspection i
         WHERE i.battery_id = b.id AND i.is_current AND i.deleted_at IS NULL
         ORDER BY i.taken_at DESC LIMIT 1) AS l ON true
 WHERE b.status <> 'retired'
   AND b.site_id IN (SELECT site_id FROM fleet_site_members WHERE user_id = %s)
 ORDER BY b.serial
"""


def dashboard(fleet, repeat):
    """The supervisor's overview page against one hand-written query giving its numbers.

    The reference returns what the page shows per battery (latest current reading's SOC, spread,
    time and situation, and the SOC band the fleet chart counts) for every active battery the
    supervisor may see, using the (battery, -taken_at) index.
    """
    get = page(fleet.supervisor, "/")

    def reference():
        with connection.cursor() as cursor:
            cursor.execute(DASHBOARD_SQL, [fleet.supervisor.pk])
            return cursor.fetchall()

    rows = reference()
    return {
        "ms": median_ms(get, repeat), "queries": query_count(get),
        "reference_ms": median_ms(reference, repeat), "reference": "hand-written SQL (LATERAL latest reading per battery)",
        "rows": len(rows),
    }


def battery_record(fleet, repeat):
    """One battery's record page with its full three-year history."""
    battery = Battery.objects.order_by("serial").first()
    get = page(fleet.supervisor, f"/batteries/{battery.pk}/")
    history = Inspection.objects.current().filter(battery=battery).count()
    return {"ms": median_ms(get, repeat), "queries": query_count(get), "serial": battery.serial, "inspections": history}


def _call_with(fn, available):
    """Call fn, passing by name whichever of `available` it asks for; NotAvailable if it needs anything else."""
    kwargs = {}
    for name, param in inspect.signature(fn).parameters.items():
        if name in available:
            kwargs[name] = available[name]
        elif param.default is inspect.Parameter.empty and param.kind not in (param.VAR_POSITIONAL, param.VAR_KEYWORD):
            raise NotAvailable(f"{fn.__module__}.{fn.__qualname__} needs “{name}”, which the benchmark does not know how to give")
    return fn(**kwargs)


def _find(module_name, attribute):
    try:
        module = importlib.import_module(module_name)
    except ImportError as exc:
        raise NotAvailable(f"{module_name} does not exist yet ({exc})") from exc
    fn = getattr(module, attribute, None)
    if fn is None:
        raise NotAvailable(f"{module_name}.{attribute} does not exist yet")
    return fn


def findings_pass(fleet, repeat):
    """The whole-fleet findings pass: fleetcare.care.detection.detect_fleet."""
    detect_fleet = _find("fleetcare.care.detection", "detect_fleet")
    available = {
        "batteries": Battery.objects.all(), "sites": fleet.sites, "user": fleet.supervisor, "now": timezone.now(),
        "today": timezone.localdate(),
    }

    def run():
        with transaction.atomic():
            result = _call_with(detect_fleet, available)
            transaction.set_rollback(True)  # every repeat starts from the same state
        return result

    return {"ms": median_ms(run, max(1, repeat // 2)), "queries": query_count(run)}


def site_plan(fleet, repeat):
    """A site's equalizing and watering plan, through the page that shows it."""
    site = fleet.sites[0]
    for name, args in (("planner:site", [site.code]), ("planner:plan", [site.code]), ("care:plan", [site.code]),
                       ("planner:today", []), ("planner:home", [])):
        try:
            path = reverse(name, args=args)
        except NoReverseMatch:
            continue
        get = page(fleet.supervisor, path)
        return {"ms": median_ms(get, max(1, repeat // 2)), "queries": query_count(get), "path": path}
    raise NotAvailable("no planner page for a site is wired yet (tried planner:site, planner:plan, care:plan, planner:today)")


def budget_export(fleet, repeat):
    """The manager's replacement budget as XLSX."""
    for name in ("budget:export_xlsx", "budget:xlsx", "budget:export"):
        try:
            path = reverse(name)
        except NoReverseMatch:
            continue
        get = page(fleet.manager, path)
        return {"ms": median_ms(get, max(1, repeat // 2)), "queries": query_count(get), "path": path}
    raise NotAvailable("no budget XLSX export is wired yet (tried budget:export_xlsx, budget:xlsx, budget:export)")


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


def csv_import(fleet, batteries=100, readings_each=20):
    """CSV import throughput (cell readings per second) against PostgreSQL COPY of the same rows.

    COPY writes the same inspections (with their summary) and the same cell rows in one transaction,
    then rolls back; the import runs the real code path (parse, check, compute, store, on-commit signals).
    """
    chosen = list(Battery.objects.select_related("profile", "site").order_by("serial")[:batteries])
    text, rows = _import_rows(fleet, chosen, readings_each)
    by_serial = {b.serial: b for b in chosen}
    inspections_csv, cells_csv = io.StringIO(), io.StringIO()
    with connection.cursor() as cursor:
        cursor.execute("SELECT coalesce(max(id), 0) + 1000000 FROM readings_inspection")
        next_id = cursor.fetchone()[0]
    ids = {}
    for serial, taken, situation, position, sg, temp, _, level in rows:
        key = (serial, taken)
        if key not in ids:
            ids[key] = next_id
            next_id += 1
            battery = by_serial[serial]
            inspections_csv.write(
                f"{ids[key]}\t{battery.pk}\t{taken}\t{fleet.crew.pk}\t{situation}\tall\t{temp}\tf\t\\N\tImported from CSV\t"
                f"{uuid.uuid4()}\t1.280\t1.270\t1.294\t0.024\t1\t\\N\t93.3\tsg\tt\t\\N\t\t{taken}\t\\N\t\\N\n"
            )
        corrected = (Decimal(sg) + Decimal("0.0007") * (Decimal(temp) - 25)).quantize(Decimal("0.001"))
        cells_csv.write(f"{ids[key]}\t{position}\t{sg}\t{corrected}\t\\N\t\\N\t{level}\n")
    inspection_columns = (
        "id, battery_id, taken_at, taken_by_id, situation, scope, temp_c, hydrometer_compensated, hours_since_charge, "
        "notes, client_uuid, sg_mean, sg_min, sg_max, sg_spread, lowest_position, volts_total, soc_percent, soc_basis, "
        "is_current, supersedes_id, revision_reason, recorded_at, deleted_at, deleted_by_id"
    )

    def copy():
        with transaction.atomic(), connection.cursor() as cursor:
            inspections_csv.seek(0)
            cells_csv.seek(0)
            cursor.copy_expert(f"COPY readings_inspection ({inspection_columns}) FROM STDIN", inspections_csv)
            cursor.copy_expert(
                "COPY readings_cellreading (inspection_id, position, sg, sg_corrected, temp_c, volts, level) FROM STDIN",
                cells_csv,
            )
            transaction.set_rollback(True)

    copy_ms = median_ms(copy, 2)
    # The import commits on its own; wrapped in one more atomic block, the commit and the on-commit
    # receivers (findings detection for each battery imported) run at its end and are timed apart.
    started = time.perf_counter()
    with transaction.atomic():
        report = csv_io.import_readings(text, user=fleet.crew, batteries=Battery.objects.all())
        stored = time.perf_counter()
    finished = time.perf_counter()
    import_ms = (finished - started) * 1000
    store_ms = (stored - started) * 1000
    if not report.imported or report.errors:
        raise AssertionError(f"the generated CSV did not import: {report.errors[:3]}")
    cells = len(rows)
    return {
        "cells": cells, "inspections": len(ids),
        "import_ms": import_ms, "import_cells_per_s": cells / import_ms * 1000,
        "copy_ms": copy_ms, "copy_cells_per_s": cells / copy_ms * 1000,
        "ratio": (cells / import_ms) / (cells / copy_ms),
        "parse_and_store_ms": store_ms, "on_commit_ms": import_ms - store_ms,
        "parse_and_store_ratio": copy_ms / store_ms,
    }

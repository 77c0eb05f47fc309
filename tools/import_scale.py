"""CSV import at scale on PostgreSQL: peak memory by file size, and speed against committed COPY.

    DATABASE_URL=postgres://postgres@127.0.0.1:5432/fc_import_scale .venv/bin/python tools/import_scale.py

Builds (once) 100 flooded 24-cell batteries in that database (it is created if missing and must be a
scratch database: the imported rows are deleted after each run), writes CSV files of 30,000, 300,000
and 1,000,000 cell rows, and imports each in a fresh process (so each has its own peak memory), the
way the background task does (a text stream, chunk by chunk, one transaction, committed). The COPY
reference writes the same inspection and cell rows with PostgreSQL COPY and commits, in a fresh
process too, in the same run. Prints one JSON line per measurement and a summary.
"""
import argparse
import json
import os
import resource
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
os.environ.setdefault("DJANGO_SETTINGS_MODULE", "fleetcare.settings")
BATTERIES = 100
CELLS = 24
SERIAL = "SCALE-{:03d}"


def setup_django():
    import django

    django.setup()


def build_fleet():
    """Migrate and create the batteries and a reader, once."""
    from django.core.management import call_command

    call_command("migrate", verbosity=0)
    import datetime as dt
    from decimal import Decimal

    from django.contrib.auth import get_user_model

    from fleetcare.fleet.models import Battery, BatteryProfile, Site

    site, _ = Site.objects.get_or_create(code="scale", defaults={"name": "Scale test", "timezone": "UTC"})
    profile, _ = BatteryProfile.objects.get_or_create(
        name="Scale 48 V 24-cell", defaults=dict(
            technology="flooded", application="traction", nominal_voltage=48, monoblocks=1, cells_per_block=24,
            capacity_ah=775, full_charge_sg=Decimal("1.290"), discharged_sg=Decimal("1.140")))
    for n in range(BATTERIES):
        Battery.objects.get_or_create(serial=SERIAL.format(n), defaults=dict(
            profile=profile, site=site, in_service_date=dt.date(2015, 1, 1)))
    get_user_model().objects.get_or_create(username="scale-reader", defaults={"is_superuser": True})


def write_file(path, rows):
    """rows cell rows: readings of 24 cells, each battery read in turn, an hour apart from 2016 on."""
    import datetime as dt

    start = dt.datetime(2016, 1, 1)
    readings = rows // CELLS
    with open(path, "w", newline="") as out:
        out.write("serial,taken_at,situation,cell,sg,temp,volts,level\n")
        for i in range(readings):
            serial = SERIAL.format(i % BATTERIES)
            taken = (start + dt.timedelta(hours=i // BATTERIES)).strftime("%Y-%m-%dT%H:%M")
            sgs = (1.270 + (i + n) % 20 / 1000 for n in range(CELLS))
            out.write("".join(f"{serial},{taken},charged,{n},{sg:.3f},{25 + i % 7},,ok\n"
                              for n, sg in enumerate(sgs, start=1)))


def child_import(path):
    setup_django()
    from django.contrib.auth import get_user_model

    from fleetcare.fleet.models import Battery
    from fleetcare.readings.csv_io import import_readings

    user = get_user_model().objects.get(username="scale-reader")
    before = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    started = time.perf_counter()
    with open(path, encoding="utf-8-sig", newline="") as text:
        report = import_readings(text, user=user, batteries=Battery.objects.filter(serial__startswith="SCALE-"))
    seconds = time.perf_counter() - started
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    if not report.imported or report.problem_count:
        raise SystemExit(f"import failed: {report.errors[:3]}")
    print(json.dumps({"what": "import", "file": str(path), "rows": report.rows_read, "seconds": round(seconds, 3),
                      "inspections": report.inspections_created, "cells": report.cells_created,
                      "peak_rss_mb": round(peak / 1024, 1), "rss_before_mb": round(before / 1024, 1)}))


def child_copy(path):
    """COPY of the same inspection and cell rows the import stores (summary columns filled), committed."""
    setup_django()
    import csv
    import io
    import uuid

    from django.contrib.auth import get_user_model
    from django.db import connection, transaction

    from fleetcare.fleet.models import Battery

    user = get_user_model().objects.get(username="scale-reader")
    ids = dict(Battery.objects.filter(serial__startswith="SCALE-").values_list("serial", "pk"))
    inspections, cells = io.StringIO(), io.StringIO()
    with connection.cursor() as cursor:
        cursor.execute("SELECT coalesce(max(id), 0) + 1000000 FROM readings_inspection")
        next_id = cursor.fetchone()[0]
    keys = {}
    with open(path, newline="") as handle:  # prepared untimed: COPY is given its text ready-made
        reader = csv.reader(handle)
        next(reader)
        for serial, taken, situation, position, sg, temp, _, level in reader:
            key = (serial, taken)
            if key not in keys:
                keys[key] = next_id
                next_id += 1
                inspections.write(
                    f"{keys[key]}\t{ids[serial]}\t{taken}+00\t{user.pk}\t{situation}\tall\t{temp}\tf\t\\N\tImported from CSV\t"
                    f"{uuid.uuid4()}\t1.280\t1.270\t1.289\t0.019\t1\t\\N\t93.3\tsg\tt\t\\N\t\t{taken}+00\t\\N\t\\N\t"
                    f"import\t\n")
            cells.write(f"{keys[key]}\t{position}\t{sg}\t{sg}\t{temp}\t\\N\t{level}\n")
    columns = ("id, battery_id, taken_at, taken_by_id, situation, scope, temp_c, hydrometer_compensated, hours_since_charge, "
               "notes, client_uuid, sg_mean, sg_min, sg_max, sg_spread, lowest_position, volts_total, soc_percent, soc_basis, "
               "is_current, supersedes_id, revision_reason, recorded_at, deleted_at, deleted_by_id, chosen_via, client_digest")
    inspections.seek(0)
    cells.seek(0)
    started = time.perf_counter()
    with transaction.atomic(), connection.cursor() as cursor:
        cursor.copy_expert(f"COPY readings_inspection ({columns}) FROM STDIN", inspections)
        cursor.copy_expert("COPY readings_cellreading (inspection_id, position, sg, sg_corrected, temp_c, volts, level) "
                           "FROM STDIN", cells)
    seconds = time.perf_counter() - started
    print(json.dumps({"what": "copy", "file": str(path), "inspections": len(keys), "seconds": round(seconds, 3)}))


def clean():
    """Delete what the last run stored, and vacuum, so every run meets the same database."""
    setup_django()
    from django.db import connection

    with connection.cursor() as cursor:
        # Each battery's kept state points at its latest readings: forget it first, rebuild it after.
        cursor.execute("DELETE FROM readings_batterystate WHERE battery_id IN (SELECT id FROM fleet_battery "
                       "WHERE serial LIKE 'SCALE-%%')")
        cursor.execute("DELETE FROM readings_cellreading WHERE inspection_id IN (SELECT id FROM readings_inspection "
                       "WHERE battery_id IN (SELECT id FROM fleet_battery WHERE serial LIKE 'SCALE-%%'))")
        cursor.execute("DELETE FROM readings_inspection WHERE battery_id IN (SELECT id FROM fleet_battery WHERE serial LIKE 'SCALE-%%')")
        cursor.execute("DELETE FROM django_tasks_database_dbtaskresult")
    from django.db import transaction

    from fleetcare.fleet.models import Battery
    from fleetcare.readings import state

    with transaction.atomic():
        state.rebuild(list(Battery.objects.filter(serial__startswith="SCALE-").values_list("pk", flat=True)))
    connection.close()
    with connection.cursor() as cursor:
        cursor.execute("VACUUM ANALYZE readings_inspection")
        cursor.execute("VACUUM ANALYZE readings_cellreading")


def run(what, path):
    done = subprocess.run([sys.executable, __file__, f"--{what}", str(path)], capture_output=True, text=True, check=True)
    result = json.loads(done.stdout.strip().splitlines()[-1])
    print(json.dumps(result), flush=True)
    run_clean()
    return result


def run_clean():
    subprocess.run([sys.executable, __file__, "--clean"], check=True)


def create_database_if_missing(url):
    import urllib.parse

    import psycopg2

    parts = urllib.parse.urlparse(url)
    name = parts.path.lstrip("/")
    conn = psycopg2.connect(host=parts.hostname, port=parts.port or 5432, user=parts.username or "postgres",
                            password=parts.password, dbname="postgres")
    conn.autocommit = True
    try:
        with conn.cursor() as cursor:
            cursor.execute("SELECT 1 FROM pg_database WHERE datname = %s", [name])
            if cursor.fetchone() is None:
                cursor.execute(f'CREATE DATABASE "{name}"')
    finally:
        conn.close()


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("--import", dest="import_file")
    parser.add_argument("--copy", dest="copy_file")
    parser.add_argument("--clean", action="store_true")
    parser.add_argument("--sizes", default="30000,300000,1000000")
    parser.add_argument("--dir", default="/tmp/fleetcare-import-scale")
    args = parser.parse_args()
    if args.import_file:
        return child_import(args.import_file)
    if args.copy_file:
        return child_copy(args.copy_file)
    if args.clean:
        return clean()
    if "postgres" not in os.environ.get("DATABASE_URL", ""):
        raise SystemExit("Set DATABASE_URL to a scratch PostgreSQL database.")
    create_database_if_missing(os.environ["DATABASE_URL"])
    setup_django()
    build_fleet()
    from django.db import connection

    connection.close()
    run_clean()
    folder = Path(args.dir)
    folder.mkdir(parents=True, exist_ok=True)
    results = {}
    for size in (int(s) for s in args.sizes.split(",")):
        path = folder / f"rows-{size}.csv"
        if not path.exists():
            write_file(path, size)
        results[size] = {"import": run("import", path)}
        if size == max(int(s) for s in args.sizes.split(",")):
            results[size]["copy"] = run("copy", path)
            results[size]["import_again"] = run("import", path)
    sizes = sorted(results)
    print("\nSummary")
    for size in sizes:
        r = results[size]["import"]
        print(f"  {size:>9,} rows: import {r['seconds']:.2f} s, peak RSS {r['peak_rss_mb']:.0f} MB")
    if len(sizes) >= 2:
        print(f"  peak memory {sizes[1]:,} rows minus {sizes[0]:,} rows: "
              f"{results[sizes[1]]['import']['peak_rss_mb'] - results[sizes[0]]['import']['peak_rss_mb']:+.0f} MB")
    top = results[sizes[-1]]
    imports = sorted([top["import"]["seconds"], top["import_again"]["seconds"]])
    print(f"  {sizes[-1]:,} rows: COPY (committed) {top['copy']['seconds']:.2f} s; import {imports[0]:.2f} s best of two "
          f"→ {100 * top['copy']['seconds'] / imports[0]:.0f} % of COPY")


if __name__ == "__main__":
    main()

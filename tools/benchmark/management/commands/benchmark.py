"""python manage.py benchmark [--batteries 100 1000] [--json FILE]: FleetCare at fleet scale, beside references.

Runs only on PostgreSQL, in a database of its own (fc_bench by default) that it drops and creates
again, so the database named by DATABASE_URL is never touched. See docs/benchmarks.md.
"""
import json
import os
import platform
import time
import traceback

import psycopg2
from django.contrib.auth import get_user_model
from django.core.management import call_command
from django.core.management.base import BaseCommand, CommandError
from django.db import connection
from django.test.utils import override_settings
from django.utils import timezone

from tools.benchmark import fleet as fleet_data
from tools.benchmark import measure

DASHBOARD_TARGET_MS = 300
DASHBOARD_TARGET_RATIO = 2.0
IMPORT_TARGET_RATIO = 0.30


class Command(BaseCommand):
    help = "Generate synthetic fleets on PostgreSQL and time the dashboard, battery record, findings, plan, budget and CSV import."

    def add_arguments(self, parser):
        parser.add_argument("--batteries", nargs="+", type=int, default=[100, 1000], help="Fleet sizes (default 100 1000).")
        parser.add_argument("--json", dest="json_path", help="Also write the results as JSON to this file.")
        parser.add_argument("--repeat", type=int, default=7, help="Timed runs per page; the median is reported (default 7).")
        parser.add_argument("--database", default="fc_bench", help="Database to drop, create and fill (default fc_bench).")
        parser.add_argument("--keep", action="store_true", help="Leave the benchmark database in place afterwards.")
        parser.add_argument("--verify", type=int, default=300, help="Inspections whose SQL summary is rechecked in Python.")

    def handle(self, *args, batteries, json_path, repeat, database, keep, verify, **options):
        if connection.vendor != "postgresql":
            raise CommandError(
                "The benchmark runs on PostgreSQL only (its fleet is generated with PostgreSQL SQL and measured against "
                "COPY). Set DATABASE_URL=postgres://... ; it works in its own database, --database (default fc_bench)."
            )
        original = connection.settings_dict["NAME"]
        if database == original:
            raise CommandError(f"--database {database} is the configured database; choose another name, it is dropped.")
        self._recreate(database)
        results = {
            "date": timezone.now().isoformat(timespec="seconds"),
            "machine": {"cpus": os.cpu_count(), "platform": platform.platform(), "python": platform.python_version()},
            "database": database, "repeat": repeat, "sizes": {},
        }
        try:
            self._use(database)
            call_command("migrate", verbosity=0, interactive=False)
            with connection.cursor() as cursor:
                cursor.execute("SHOW server_version")
                results["machine"]["postgresql"] = cursor.fetchone()[0]
            with override_settings(DEBUG=False):
                for size in batteries:
                    results["sizes"][str(size)] = self._one_size(size, repeat, verify)
        finally:
            self._use(original)
            if not keep:
                self._drop(database)
        results["targets"] = targets(results)
        self.stdout.write(table(results))
        if json_path:
            with open(json_path, "w", encoding="utf-8") as out:
                json.dump(results, out, indent=2, default=str)
            self.stdout.write(f"JSON written to {json_path}")
        else:
            self.stdout.write(json.dumps(results, indent=2, default=str))

    def _one_size(self, size, repeat, verify):
        self.stderr.write(f"== {size} batteries: generating three years of readings")
        started = time.perf_counter()
        fleet = fleet_data.build(size, get_user_model())
        result = {
            "batteries": size, "inspections": fleet.inspections, "cell_readings": fleet.cells,
            "generate_s": round(time.perf_counter() - started, 1),
        }
        checked, mismatches = fleet_data.verify_sample(verify)
        result["summary_check"] = {"checked": checked, "mismatches": len(mismatches), "examples": mismatches[:5]}
        parts = [
            ("dashboard", lambda: measure.dashboard(fleet, repeat)),
            ("battery_record", lambda: measure.battery_record(fleet, repeat)),
            ("findings_pass", lambda: measure.findings_pass(fleet, repeat)),
            ("site_plan", lambda: measure.site_plan(fleet, repeat)),
            ("budget_export", lambda: measure.budget_export(fleet, repeat)),
            ("csv_import", lambda: measure.csv_import(fleet)),
        ]
        for name, run in parts:
            self.stderr.write(f"   {name}")
            try:
                result[name] = rounded(run())
            except Exception as exc:  # a broken feature is reported, and the other parts still run
                result[name] = {"error": f"{type(exc).__name__}: {exc}", "trace": traceback.format_exc(limit=4)}
        return result

    def _admin(self):
        params = connection.get_connection_params()
        params["dbname"] = "postgres"
        params.pop("database", None)
        conn = psycopg2.connect(**params)
        conn.autocommit = True
        return conn

    def _recreate(self, database):
        self._drop(database)
        conn = self._admin()
        try:
            with conn.cursor() as cursor:
                cursor.execute(f'CREATE DATABASE "{database}"')
        finally:
            conn.close()

    def _drop(self, database):
        connection.close()
        conn = self._admin()
        try:
            with conn.cursor() as cursor:
                cursor.execute(f'DROP DATABASE IF EXISTS "{database}" WITH (FORCE)')
        finally:
            conn.close()

    def _use(self, name):
        connection.close()
        connection.settings_dict["NAME"] = name


def rounded(values):
    return {k: (round(v, 3) if k.endswith("ratio") else round(v, 1)) if isinstance(v, float) else v for k, v in values.items()}


def targets(results):
    """The issue's targets, judged on the largest fleet measured (and across sizes for query counts)."""
    sizes = results["sizes"]
    if not sizes:
        return {}
    largest = sizes[max(sizes, key=int)]
    verdict = {}
    dash = largest.get("dashboard", {})
    if "ms" in dash:
        verdict["dashboard_under_300_ms"] = dash["ms"] < DASHBOARD_TARGET_MS
        verdict["dashboard_within_2x_sql"] = dash["ms"] <= DASHBOARD_TARGET_RATIO * dash["reference_ms"]
    imp = largest.get("csv_import", {})
    if "ratio" in imp:
        verdict["import_at_least_30pct_of_copy"] = imp["ratio"] >= IMPORT_TARGET_RATIO
    for part in ("dashboard", "battery_record", "findings_pass", "site_plan", "budget_export"):
        counts = {s: r.get(part, {}).get("queries") for s, r in sizes.items()}
        if len(counts) > 1 and all(c is not None for c in counts.values()):
            verdict[f"{part}_queries_constant"] = len(set(counts.values())) == 1
    return verdict


def table(results):
    lines = [f"FleetCare benchmark {results['date']} · {results['machine'].get('cpus')} CPUs · PostgreSQL "
             f"{results['machine'].get('postgresql', '?')} · median of {results['repeat']}"]
    head = f"{'batteries':>9}  {'part':<15} {'ms':>9} {'queries':>8}  reference"
    lines += [head, "-" * len(head)]
    for size, r in results["sizes"].items():
        lines.append(f"{size:>9}  {'data':<15} {r['inspections']:,} inspections, {r['cell_readings']:,} cell readings, "
                     f"generated in {r['generate_s']} s; summary check {r['summary_check']['mismatches']} wrong of "
                     f"{r['summary_check']['checked']}")
        for part in ("dashboard", "battery_record", "findings_pass", "site_plan", "budget_export"):
            v = r.get(part, {})
            if "error" in v:
                lines.append(f"{size:>9}  {part:<15} {'ERROR':>9}           {v['error']}")
            else:
                ref = f"SQL {v['reference_ms']} ms ({v['ms'] / v['reference_ms']:.1f}x)" if "reference_ms" in v else ""
                lines.append(f"{size:>9}  {part:<15} {v['ms']:>9} {v['queries']:>8}  {ref}")
        v = r.get("csv_import", {})
        if "ratio" in v:
            lines.append(f"{size:>9}  {'csv_import':<15} {v['import_cells_per_s']:>9,.0f} cells/s on {v['cells']:,} cells;"
                         f" COPY (committed) {v['copy_cells_per_s']:,.0f} cells/s; import = {v['ratio'] * 100:.0f} % of COPY")
            lines.append(f"{'':>9}  {'':<15} of {v['import_ms']:,.0f} ms: parse+check+store {v['parse_and_store_ms']:,.0f} ms,"
                         f" commit {v['commit_ms']:,.0f} ms (so far {v['without_findings_ratio'] * 100:.0f} % of COPY),"
                         f" findings pass {v['findings_ms']:,.0f} ms")
        else:
            lines.append(f"{size:>9}  {'csv_import':<15} {v}")
    lines.append("targets: " + ", ".join(f"{k}={'met' if ok else 'MISSED'}" for k, ok in results.get("targets", {}).items()))
    return "\n".join(lines)

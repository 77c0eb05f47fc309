"""python manage.py benchmark [--fleets 10000x1 1000x3 1000x6] [--json FILE]: FleetCare at fleet scale, beside references.

Each fleet (batteries x years of history) is generated on PostgreSQL in a database of its own
(fc_bench_<batteries>x<years> by default), which is dropped and created again, so the database named
by DATABASE_URL is never touched. The pages and commands are then timed in rounds that visit every
fleet in turn, so the history-doubling pair (1,000 batteries with three and with six years) is
measured side by side rather than minutes apart. See docs/benchmarks.md.
"""
import json
import os
import platform
import statistics
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

# The targets, as the work asks for them (docs/benchmarks.md).
OVERVIEW_TARGET_MS = 300  # at the largest fleet
OVERVIEW_TARGET_RATIO = 1.5  # of the hand-written SQL reference
HISTORY_GROWTH_TARGET = 1.15  # time with twice the history / time with the history
BUDGET_TARGET_MS = {1000: 1000, 10000: 5000}  # budget page and XLSX, by fleet size
FINDINGS_TARGET_MS = {10000: 2000}
IMPORT_TARGET_RATIO = 0.50  # of committed COPY (measured at 1 M rows by tools/import_scale.py)

PAGES = ("dashboard", "battery_list", "battery_record", "today", "api_status", "site_plan", "findings_pass",
         "budget_page", "budget_export")


def fleet_spec(text):
    try:
        batteries, years = (int(part) for part in text.lower().split("x"))
    except ValueError:
        raise CommandError(f"a fleet is written batteries x years, for example 1000x3, not {text!r}") from None
    if batteries < 1 or years < 1:
        raise CommandError(f"a fleet needs at least one battery and one year: {text!r}")
    return batteries, years


class Command(BaseCommand):
    help = ("Generate synthetic fleets on PostgreSQL and time the overview, battery list and record, today's work, "
            "API status, week plan, findings pass, budget page and export and the CSV import.")

    def add_arguments(self, parser):
        parser.add_argument("--fleets", nargs="+", type=fleet_spec, default=[(10000, 1), (1000, 3), (1000, 6)],
                            help="Fleets as batteries x years of history (default 10000x1 1000x3 1000x6).")
        parser.add_argument("--json", dest="json_path", help="Also write the results as JSON to this file.")
        parser.add_argument("--repeat", type=int, default=7, help="Timed runs per page and round; the median counts (default 7).")
        parser.add_argument("--rounds", type=int, default=2, help="Rounds over all fleets; the median of the rounds counts (default 2).")
        parser.add_argument("--database", default="fc_bench", help="Prefix of the databases to drop, create and fill (default fc_bench).")
        parser.add_argument("--keep", action="store_true", help="Leave the benchmark databases in place afterwards.")
        parser.add_argument("--verify", type=int, default=300, help="Inspections whose SQL summary is rechecked in Python.")
        parser.add_argument("--skip-import", action="store_true", help="Leave out the CSV import measurement.")

    def handle(self, *args, fleets, json_path, repeat, rounds, database, keep, verify, skip_import, **options):
        if connection.vendor != "postgresql":
            raise CommandError(
                "The benchmark runs on PostgreSQL only (its fleet is generated with PostgreSQL SQL and measured against "
                "COPY). Set DATABASE_URL=postgres://... ; it works in databases of its own, --database (default fc_bench)."
            )
        original = connection.settings_dict["NAME"]
        names = {spec: f"{database}_{spec[0]}x{spec[1]}" for spec in fleets}
        if original in names.values():
            raise CommandError(f"{original} is the configured database; choose another --database prefix, it is dropped.")
        results = {
            "date": timezone.now().isoformat(timespec="seconds"),
            "machine": {"cpus": os.cpu_count(), "platform": platform.platform(), "python": platform.python_version()},
            "repeat": repeat, "rounds": rounds, "fleets": {},
        }
        built = {}
        try:
            with override_settings(DEBUG=False):
                for spec in fleets:
                    built[spec] = self._build(spec, names[spec], verify, results)
                timings = {spec: {part: [] for part in PAGES} for spec in fleets}
                for round_number in range(1, rounds + 1):
                    for spec in fleets:
                        self.stderr.write(f"== round {round_number}: {spec[0]} batteries x {spec[1]} years")
                        self._use(names[spec])
                        self._measure(built[spec], repeat, timings[spec])
                for spec in fleets:
                    out = results["fleets"][label(spec)]
                    for part, runs in timings[spec].items():
                        out[part] = combine(runs)
                    if not skip_import:
                        self._use(names[spec])
                        self.stderr.write(f"== CSV import into {spec[0]} batteries x {spec[1]} years")
                        out["csv_import"] = attempt(lambda: measure.csv_import(built[spec]))
        finally:
            self._use(original)
            if not keep:
                for name in names.values():
                    self._drop(name)
        results["targets"] = targets(results)
        self.stdout.write(table(results))
        if json_path:
            with open(json_path, "w", encoding="utf-8") as out:
                json.dump(results, out, indent=2, default=str)
            self.stdout.write(f"JSON written to {json_path}")
        else:
            self.stdout.write(json.dumps(results, indent=2, default=str))

    def _build(self, spec, name, verify, results):
        batteries, years = spec
        self._recreate(name)
        self._use(name)
        call_command("migrate", verbosity=0, interactive=False)
        with connection.cursor() as cursor:
            cursor.execute("SHOW server_version")
            results["machine"]["postgresql"] = cursor.fetchone()[0]
        self.stderr.write(f"== {batteries} batteries: generating {years} year(s) of readings in {name}")
        started = time.perf_counter()
        fleet = fleet_data.build(batteries, get_user_model(), days=365 * years)
        checked, mismatches = fleet_data.verify_sample(verify)
        results["fleets"][label(spec)] = {
            "batteries": batteries, "years": years, "database": name, "inspections": fleet.inspections,
            "cell_readings": fleet.cells, "generate_s": round(time.perf_counter() - started, 1),
            "summary_check": {"checked": checked, "mismatches": len(mismatches), "examples": mismatches[:5]},
        }
        return fleet

    def _measure(self, fleet, repeat, into):
        for part in PAGES:
            self.stderr.write(f"   {part}")
            into[part].append(attempt(lambda: getattr(measure, part)(fleet, repeat)))

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


def label(spec):
    return f"{spec[0]}x{spec[1]}"


def attempt(run):
    """A part's figures, or its error: a broken feature is reported, and the other parts still run."""
    try:
        return rounded(run())
    except Exception as exc:
        return {"error": f"{type(exc).__name__}: {exc}", "trace": traceback.format_exc(limit=4)}


def combine(runs):
    """One part's rounds as one figure: the median of the rounds' medians (each round is a median of runs)."""
    good = [r for r in runs if "error" not in r]
    if not good:
        return runs[-1] if runs else {"error": "not measured"}
    out = dict(good[-1])
    out["rounds_ms"] = [r["ms"] for r in good]
    out["ms"] = round(statistics.median(out["rounds_ms"]), 1)
    if all("reference_ms" in r for r in good):
        out["reference_rounds_ms"] = [r["reference_ms"] for r in good]
        out["reference_ms"] = round(statistics.median(out["reference_rounds_ms"]), 1)
    return out


def rounded(values):
    return {k: (round(v, 3) if k.endswith("ratio") else round(v, 1)) if isinstance(v, float) else v for k, v in values.items()}


def targets(results):
    """Each target of docs/benchmarks.md judged on the fleets measured: {name: (met, what was measured)}."""
    fleets = results["fleets"]
    verdict = {}
    if not fleets:
        return verdict
    largest_label = max(fleets, key=lambda k: (fleets[k]["batteries"], -fleets[k]["years"]))
    largest = fleets[largest_label]
    dash = largest.get("dashboard", {})
    if "ms" in dash:
        verdict[f"overview at {largest['batteries']:,} batteries within {OVERVIEW_TARGET_MS} ms"] = (
            dash["ms"] <= OVERVIEW_TARGET_MS, f"{dash['ms']:.0f} ms")
        verdict[f"overview within {OVERVIEW_TARGET_RATIO}x its SQL reference"] = (
            dash["ms"] <= OVERVIEW_TARGET_RATIO * dash["reference_ms"],
            f"{dash['ms'] / dash['reference_ms']:.2f}x ({dash['reference_ms']:.0f} ms of SQL)")
    for short_label, short in fleets.items():
        for long_label, long in fleets.items():
            if long["batteries"] != short["batteries"] or long["years"] != 2 * short["years"]:
                continue
            for part in PAGES:
                a, b = short.get(part, {}), long.get(part, {})
                if "ms" in a and "ms" in b:
                    name = f"{part}: {short_label} -> {long_label} history"
                    verdict[name + f" within {HISTORY_GROWTH_TARGET}x"] = (
                        b["ms"] <= HISTORY_GROWTH_TARGET * a["ms"], f"{a['ms']:.0f} -> {b['ms']:.0f} ms ({b['ms'] / a['ms']:.2f}x)")
                    verdict[name + " same queries"] = (a["queries"] == b["queries"], f"{a['queries']} -> {b['queries']}")
    for fleet_label, fleet in fleets.items():
        size, years = fleet["batteries"], fleet["years"]
        limit = BUDGET_TARGET_MS.get(size)
        if limit is not None and (size != 1000 or years == 3):
            for part in ("budget_page", "budget_export"):
                if "ms" in fleet.get(part, {}):
                    verdict[f"{part} at {fleet_label} within {limit} ms"] = (fleet[part]["ms"] <= limit, f"{fleet[part]['ms']:.0f} ms")
        limit = FINDINGS_TARGET_MS.get(size)
        if limit is not None and "ms" in fleet.get("findings_pass", {}):
            verdict[f"findings_pass at {fleet_label} within {limit} ms"] = (
                fleet["findings_pass"]["ms"] <= limit, f"{fleet['findings_pass']['ms']:.0f} ms")
    return verdict


def table(results):
    lines = [f"FleetCare benchmark {results['date']} · {results['machine'].get('cpus')} CPUs · PostgreSQL "
             f"{results['machine'].get('postgresql', '?')} · median of {results['rounds']} rounds of "
             f"{results['repeat']} runs (heavy parts {max(1, results['repeat'] // 2)})"]
    head = f"{'fleet':>9}  {'part':<15} {'ms':>9} {'queries':>8}  rounds / reference"
    lines += [head, "-" * len(head)]
    for name, r in results["fleets"].items():
        lines.append(f"{name:>9}  {'data':<15} {r['inspections']:,} inspections, {r['cell_readings']:,} cell readings, "
                     f"generated in {r['generate_s']} s; summary check {r['summary_check']['mismatches']} wrong of "
                     f"{r['summary_check']['checked']}")
        for part in PAGES:
            v = r.get(part, {})
            if "error" in v:
                lines.append(f"{name:>9}  {part:<15} {'ERROR':>9}           {v['error']}")
            elif "ms" in v:
                ref = f"; SQL {v['reference_ms']} ms ({v['ms'] / v['reference_ms']:.2f}x)" if "reference_ms" in v else ""
                lines.append(f"{name:>9}  {part:<15} {v['ms']:>9} {v['queries']:>8}  {v.get('rounds_ms')}{ref}")
        v = r.get("csv_import", {})
        if "ratio" in v:
            lines.append(f"{name:>9}  {'csv_import':<15} {v['import_cells_per_s']:>9,.0f} cells/s on {v['cells']:,} cells;"
                         f" COPY (committed) {v['copy_cells_per_s']:,.0f} cells/s; import = {v['ratio'] * 100:.0f} % of COPY")
            lines.append(f"{'':>9}  {'':<15} of {v['import_ms']:,.0f} ms: parse+check+store {v['parse_and_store_ms']:,.0f} ms,"
                         f" commit {v['commit_ms']:,.0f} ms, after commit {v['findings_ms']:,.0f} ms")
        elif v:
            lines.append(f"{name:>9}  {'csv_import':<15} {v}")
    lines.append("targets:")
    for name, (ok, measured) in results.get("targets", {}).items():
        lines.append(f"  {'met   ' if ok else 'MISSED'}  {name}: {measured}")
    return "\n".join(lines)

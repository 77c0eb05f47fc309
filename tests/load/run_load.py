"""Load test on loopback: 50 tablets submit inspections through the web form to gunicorn on PostgreSQL.

    DATABASE_URL=postgres://postgres@127.0.0.1:5432/fc_load python tests/load/run_load.py [--outage database|server]

It drops and creates its own database (the name in DATABASE_URL, fc_load by default; never "fleetcare"),
loads 50 batteries and 50 crew logins, starts gunicorn (2 workers by default) on 127.0.0.1, and runs:

1. steady: every tablet signs in, then for --seconds (60) loops (the tablets start one by one over the
   first --ramp-seconds, 5 by default, as a crew's tablets do, not all in one instant): GET the entry page for the CSRF
   token, POST a 24-cell inspection with a client UUID of its own; about 10 % are sent twice at
   once (a double tap), about 5 % lose their answer and are sent again on the next round (a retry).
   With --via api the reading goes as JSON to /api/batteries/<id>/inspections instead (session
   sign-in, CSRF header), with the same double taps and resends.
2. outage (with --outage): the same traffic while PostgreSQL goes away for a few seconds in the
   middle: "database" refuses connections to this database only (harmless to anyone else);
   "server" stops and starts the PostgreSQL cluster (pg_ctlcluster), which every user of it notices.
   A tablet whose submission fails keeps it and resends it later with the same UUID.

With --import-rows N, a CSV file of N cell rows (for 100 batteries of another site) is uploaded through
the import page --import-after seconds (15) into the steady phase, once every tablet is working, and the
background worker (`manage.py db_worker`, started here) imports it while the tablets go on. The import must
end stored in full (all its inspections, none twice) within the phase. The report gives the latency of the
posts that overlapped the import (from the upload to the import seen finished) beside that of the posts of
the same phase after the tablets' start that did not (the reference, same run).

Afterwards it checks that the stored inspections are exactly the distinct UUIDs the tablets had
confirmed, each with all 24 cells, no UUID twice and none the tablets never sent; that the steady
phase had no errors; and prints p50/p95/p99 latency. Every loop is bounded in count and in time;
only 127.0.0.1 is contacted. Exit status 0 when every check passes.
"""
import argparse
import datetime as dt
import http.client
import http.cookiejar
import json
import os
import random
import re
import signal
import socket
import subprocess
import sys
import threading
import time
import urllib.error
import urllib.parse
import urllib.request
import uuid
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

HOST = "127.0.0.1"
PASSWORD = "load-test-password-5"
CELLS = 24
MAX_ROUNDS = 5_000           # per tablet and phase, whatever the clock says
MAX_ATTEMPTS = 200           # per submission
REQUEST_TIMEOUT_S = 30
CSRF_INPUT = re.compile(r'name="csrfmiddlewaretoken" value="([^"]+)"')
RESULT_URL = re.compile(r"/readings/inspection/(\d+)/$")


class NoRedirect(urllib.request.HTTPRedirectHandler):
    def redirect_request(self, *args, **kwargs):
        return None


class Stats:
    def __init__(self):
        self.lock = threading.Lock()
        self.latency = {"sign_in": [], "get": [], "post": []}
        self.ended_at = {"sign_in": [], "get": [], "post": []}  # monotonic time each request ended
        self.outcomes = {}
        self.errors = []

    def add(self, kind, seconds, outcome):
        with self.lock:
            self.latency[kind].append(seconds)
            self.ended_at[kind].append(time.monotonic())
            key = f"{kind} {outcome}"
            self.outcomes[key] = self.outcomes.get(key, 0) + 1

    def error(self, text):
        with self.lock:
            if len(self.errors) < 50:
                self.errors.append(text)


class Tablet:
    """One crew member's tablet: a cookie jar, one battery, a list of submissions waiting to be confirmed."""

    def __init__(self, base, username, battery_pk, stats, rng, via="form"):
        self.base, self.username, self.battery_pk, self.stats, self.rng = base, username, battery_pk, stats, rng
        self.via = via
        self.jar = http.cookiejar.CookieJar()
        self.opener = urllib.request.build_opener(urllib.request.HTTPCookieProcessor(self.jar), NoRedirect)
        self.pending = []          # submissions not yet confirmed, resent with the same UUID
        self.confirmed = {}        # uuid -> inspection id the server answered
        self.sent = set()          # every UUID ever posted
        self.signed_in = False

    def request(self, kind, path, data=None, json_body=None):
        """(status, location or body); status 0 for a refused or broken connection."""
        body = urllib.parse.urlencode(data).encode() if data is not None else None
        req = urllib.request.Request(self.base + path, data=body)
        if json_body is not None:
            req = urllib.request.Request(self.base + path, data=json.dumps(json_body).encode(), headers={
                "Content-Type": "application/json", "X-CSRFToken": self.csrf_cookie() or "",
            })
        started = time.perf_counter()
        try:
            with self.opener.open(req, timeout=REQUEST_TIMEOUT_S) as response:
                status, text = response.status, response.read().decode("utf-8", "replace")
        except urllib.error.HTTPError as exc:
            status, text = exc.code, exc.headers.get("Location") or exc.read().decode("utf-8", "replace")
        except (urllib.error.URLError, ConnectionError, socket.timeout, TimeoutError, http.client.HTTPException) as exc:
            status, text = 0, repr(exc)
        self.stats.add(kind, time.perf_counter() - started, status)
        return status, text

    def sign_in(self):
        status, page = self.request("sign_in", "/accounts/login/")
        token = CSRF_INPUT.search(page) if status == 200 else None
        if not token:
            return False
        status, location = self.request("sign_in", "/accounts/login/", {
            "csrfmiddlewaretoken": token.group(1), "username": self.username, "password": PASSWORD, "next": "/",
        })
        self.signed_in = status == 302 and "/accounts/login/" not in location
        return self.signed_in

    def new_submission(self):
        taken = dt.datetime.now(dt.timezone.utc) - dt.timedelta(minutes=self.rng.randint(1, 600))  # the site is on UTC
        # A healthy charged tray: cells within a few points of each other (a cell 0.020 above the others' median
        # is suspect and would need its own confirmation, which a tablet in a hurry does not give).
        tray = self.rng.randint(268, 284)
        cells = {f"sg_{p}": str(tray + self.rng.randint(-6, 6)) for p in range(1, CELLS + 1)}
        return {
            "client_uuid": str(uuid.uuid4()), "situation": "charged", "scope": "all",
            "taken_at": taken.strftime("%Y-%m-%dT%H:%M"), "temp": str(self.rng.randint(18, 34)), "notes": "load test",
            "attempts": 0, **cells,
        }

    def csrf_cookie(self):
        return next((c.value for c in self.jar if c.name == "csrftoken"), None)

    def submit(self, submission):
        return self.submit_api(submission) if self.via == "api" else self.submit_form(submission)

    def submit_api(self, submission):
        """POST the reading as JSON to /api/ (session sign-in, CSRF header); True when stored or already stored."""
        submission["attempts"] += 1
        payload = {
            "client_uuid": submission["client_uuid"], "situation": submission["situation"], "scope": "all",
            "taken_at": submission["taken_at"], "temp": submission["temp"], "notes": submission["notes"],
            "cells": [{"position": p, "sg": submission[f"sg_{p}"]} for p in range(1, CELLS + 1)],
        }
        self.sent.add(submission["client_uuid"])
        status, body = self.request("post", f"/api/batteries/{self.battery_pk}/inspections", json_body=payload)
        if status in (401, 403):
            self.signed_in = False
            return False
        if status not in (200, 201):
            if 400 <= status < 500:
                self.stats.error(f"{self.username}: API refused the reading ({status}): {body[:200]}")
            return False
        try:
            inspection_id = json.loads(body)["id"]
        except (ValueError, KeyError):
            self.stats.error(f"{self.username}: API answer without an id: {body[:200]}")
            return False
        previous = self.confirmed.setdefault(submission["client_uuid"], inspection_id)
        if previous != inspection_id:
            self.stats.error(f"{submission['client_uuid']} answered {previous} then {inspection_id}")
        return True

    def submit_form(self, submission):
        """Send once through the tablet form; True when the server confirmed it (a redirect to the stored inspection)."""
        submission["attempts"] += 1
        status, page = self.request("get", f"/readings/battery/{self.battery_pk}/inspect/")
        if status in (302, 403) and not self.sign_in():
            return False
        if status != 200:
            status, page = self.request("get", f"/readings/battery/{self.battery_pk}/inspect/")
            if status != 200:
                return False
        token = CSRF_INPUT.search(page)
        if not token:
            self.stats.error(f"{self.username}: entry page without a CSRF token")
            return False
        form = {k: v for k, v in submission.items() if k != "attempts"}
        form["csrfmiddlewaretoken"] = token.group(1)
        self.sent.add(submission["client_uuid"])
        status, location = self.request("post", f"/readings/battery/{self.battery_pk}/inspect/", form)
        match = RESULT_URL.search(location) if status == 302 else None
        if not match:
            if status == 200:
                self.stats.error(f"{self.username}: form refused: {location[:200]}")
            return False
        inspection_id = int(match.group(1))
        previous = self.confirmed.setdefault(submission["client_uuid"], inspection_id)
        if previous != inspection_id:
            self.stats.error(f"{submission['client_uuid']} answered {previous} then {inspection_id}")
        return True

    def run(self, until, think_s, stop_event):
        """One phase: new submissions, double taps and lost answers, resending whatever is pending."""
        for _ in range(MAX_ROUNDS):
            if time.monotonic() >= until or stop_event.is_set():
                break
            if not self.signed_in and not self.sign_in():
                time.sleep(self.rng.uniform(0.5, 1.5))
                continue
            self.flush_pending(limit=3)
            submission = self.new_submission()
            roll = self.rng.random()
            if self.submit(submission):
                if roll < 0.10:          # double tap: the same form posted again at once
                    self.submit(submission)
                elif roll < 0.15:        # the answer got lost: the tablet will send it again later
                    self.pending.append(submission)
            else:
                self.pending.append(submission)
            time.sleep(self.rng.uniform(0.5, 1.5) * think_s)

    def flush_pending(self, limit):
        for submission in list(self.pending)[:limit]:
            if submission["attempts"] >= MAX_ATTEMPTS:
                continue
            if self.submit(submission):
                self.pending.remove(submission)
            else:
                break

    def drain(self, until):
        for _ in range(MAX_ROUNDS):
            if not self.pending or time.monotonic() >= until:
                break
            if not self.signed_in:
                self.sign_in()
            self.flush_pending(limit=len(self.pending))
            if self.pending:
                time.sleep(self.rng.uniform(0.5, 1.5))


def percentile(values, p):
    if not values:
        return None
    ordered = sorted(values)
    return ordered[min(len(ordered) - 1, int(round(p / 100 * (len(ordered) - 1))))]


def latency_ms(values):
    return {f"p{p}": round(percentile(values, p) * 1000, 1) for p in (50, 95, 99)} | {"count": len(values)} if values else {}


# --- the database and the server -------------------------------------------------------------------

def setup_django():
    os.environ.setdefault("DJANGO_SETTINGS_MODULE", "fleetcare.settings")
    import django

    django.setup()


def admin_sql(database_url, sql):
    import psycopg2

    parts = urllib.parse.urlparse(database_url)
    conn = psycopg2.connect(host=parts.hostname, port=parts.port or 5432, user=parts.username or "postgres",
                            password=parts.password, dbname="postgres")
    conn.autocommit = True
    try:
        with conn.cursor() as cursor:
            cursor.execute(sql)
    finally:
        conn.close()


BULK_BATTERIES = 100
BULK_USER = "bulk-office"


def create_bulk_site(profile):
    """A second site whose 100 batteries receive the big import, and a login allowed to import for it."""
    from django.contrib.auth import get_user_model

    from fleetcare.accounts.roles import SUPERVISOR, ensure_groups
    from fleetcare.fleet.models import Battery, Site

    site = Site.objects.create(name="Bulk import depot", code="bulk", timezone="UTC")
    user = get_user_model().objects.create_user(BULK_USER, password=PASSWORD)
    user.groups.add(ensure_groups()[SUPERVISOR])
    site.members.add(user)
    Battery.objects.bulk_create([Battery(serial=f"BULK-{n:03d}", profile=profile, site=site,
                                         in_service_date=dt.date(2015, 1, 1)) for n in range(BULK_BATTERIES)])


def write_import_file(path, rows):
    """`rows` cell rows: 24-cell readings after charge, each bulk battery read in turn, an hour apart from 2016 on."""
    start = dt.datetime(2016, 1, 1)
    with open(path, "w", newline="") as out:
        out.write("serial,taken_at,situation,cell,sg,temp,volts,level\n")
        for i in range(rows // CELLS):
            serial = f"BULK-{i % BULK_BATTERIES:03d}"
            taken = (start + dt.timedelta(hours=i // BULK_BATTERIES)).strftime("%Y-%m-%dT%H:%M")
            out.write("".join(f"{serial},{taken},charged,{n},{1.270 + (i + n) % 20 / 1000:.3f},{25 + i % 7},,ok\n"
                              for n in range(1, CELLS + 1)))
    return rows // CELLS


class BulkImport:
    """Uploads the file through the import page as the bulk site's supervisor and follows its progress."""

    def __init__(self, base, path):
        self.base, self.path = base, path
        self.jar = http.cookiejar.CookieJar()
        self.opener = urllib.request.build_opener(urllib.request.HTTPCookieProcessor(self.jar), NoRedirect)
        self.progress_url = None
        self.uploaded_after_s = self.running_after_s = self.finished_after_s = None
        self.at_running = self.error = None

    def _open(self, req):
        try:
            with self.opener.open(req, timeout=120) as response:
                return response.status, response.read().decode("utf-8", "replace"), response.headers
        except urllib.error.HTTPError as exc:
            return exc.code, exc.read().decode("utf-8", "replace"), exc.headers

    def upload(self):
        status, page, _ = self._open(urllib.request.Request(self.base + "/accounts/login/"))
        token = CSRF_INPUT.search(page).group(1)
        self._open(urllib.request.Request(self.base + "/accounts/login/", data=urllib.parse.urlencode({
            "csrfmiddlewaretoken": token, "username": BULK_USER, "password": PASSWORD, "next": "/"}).encode()))
        status, page, _ = self._open(urllib.request.Request(self.base + "/readings/import/"))
        token = CSRF_INPUT.search(page).group(1)
        boundary = uuid.uuid4().hex
        body = b"".join([
            f"--{boundary}\r\nContent-Disposition: form-data; name=\"csrfmiddlewaretoken\"\r\n\r\n{token}\r\n".encode(),
            f"--{boundary}\r\nContent-Disposition: form-data; name=\"file\"; filename=\"bulk.csv\"\r\n"
            "Content-Type: text/csv\r\n\r\n".encode(),
            Path(self.path).read_bytes(), f"\r\n--{boundary}--\r\n".encode(),
        ])
        started = time.perf_counter()
        status, _, headers = self._open(urllib.request.Request(
            self.base + "/readings/import/", data=body, headers={
                "Content-Type": f"multipart/form-data; boundary={boundary}", "Referer": self.base + "/readings/import/"}))
        location = headers.get("Location") or ""
        if status != 302 or "/readings/import/" not in location:
            raise SystemExit(f"the upload was not accepted: {status} {location}")
        self.upload_s = round(time.perf_counter() - started, 1)
        self.progress_url = urllib.parse.urljoin(self.base, location) + "progress/"

    def progress(self):
        status, text, _ = self._open(urllib.request.Request(self.progress_url))
        return json.loads(text) if status == 200 else {"state": f"HTTP {status}"}

    def run_beside(self, started, after_s, until_s):
        """Upload `after_s` seconds after the phase's start (`started`, monotonic), then poll four times a second
        until the import is seen finished or `until_s` seconds have passed since the start. Keeps the upload's
        start, when the worker was seen working and when the import was seen finished (seconds after `started`)."""
        time.sleep(max(0.0, started + after_s - time.monotonic()))
        self.uploaded_after_s = time.monotonic() - started
        try:
            self.upload()
        except (Exception, SystemExit) as exc:  # reported by the verdict, not lost with this thread
            self.error = f"the upload failed: {exc}"
            return
        while time.monotonic() - started < until_s:
            now = self.progress()
            if self.running_after_s is None and now.get("rows_checked", 0) > 0:
                self.running_after_s, self.at_running = time.monotonic() - started, now
            if now.get("finished"):
                self.finished_after_s = time.monotonic() - started
                return
            time.sleep(0.25)

    def wait(self, until_running=False, seconds=900):
        """Poll every second until the worker has begun (until_running) or the import has finished."""
        deadline = time.monotonic() + seconds
        while time.monotonic() < deadline:
            now = self.progress()
            if now.get("finished") or (until_running and now.get("rows_checked", 0) > 0):
                return now
            time.sleep(1)
        return self.progress()


def start_worker(env):
    command = ["nice", "-n", "10", sys.executable, str(ROOT / "manage.py"), "db_worker", "--no-reload", "--interval", "1"]
    log = open(ROOT / "test-artifacts" / "load-worker.log", "w")
    return subprocess.Popen(command, cwd=ROOT, env=env, stdout=log, stderr=subprocess.STDOUT, start_new_session=True)


def create_world(tablets):
    """One warehouse, one 24-cell battery and one crew login per tablet; returns [(username, battery pk)]."""
    from decimal import Decimal

    from django.contrib.auth import get_user_model
    from django.core.management import call_command

    from fleetcare.accounts.roles import CREW, ensure_groups
    from fleetcare.fleet.models import Battery, BatteryProfile, ChargingRoom, Site

    call_command("migrate", verbosity=0, interactive=False)
    group = ensure_groups()[CREW]
    site = Site.objects.create(name="Load-test warehouse", code="load", timezone="UTC")
    room = ChargingRoom.objects.create(site=site, name="Room 1", chargers=8, equalizing_chargers=2)
    profile = BatteryProfile.objects.create(
        name="48 V 24-cell 775 Ah (load test)", nominal_voltage=48, monoblocks=1, cells_per_block=CELLS,
        capacity_ah=775, full_charge_sg=Decimal("1.290"), discharged_sg=Decimal("1.140"),
    )
    world = []
    user_model = get_user_model()
    for n in range(1, tablets + 1):
        user = user_model.objects.create_user(f"tablet{n:02d}", password=PASSWORD)
        user.groups.add(group)
        site.members.add(user)
        battery = Battery.objects.create(serial=f"LT-{n:03d}", profile=profile, site=site, charging_room=room,
                                         in_service_date=dt.date(2025, 1, 1))
        world.append((user.username, battery.pk))
    create_bulk_site(profile)
    return world


def free_port():
    with socket.socket() as s:
        s.bind((HOST, 0))
        return s.getsockname()[1]


def start_gunicorn(port, workers, threads, env):
    command = [str(Path(sys.executable).with_name("gunicorn")), "fleetcare.wsgi:application", "--bind", f"{HOST}:{port}",
               "--workers", str(workers), "--threads", str(threads), "--timeout", "30", "--graceful-timeout", "5",
               "--access-logfile", "-", "--error-logfile", "-", "--log-level", "warning"]
    log = open(ROOT / "test-artifacts" / "load-gunicorn.log", "w")
    process = subprocess.Popen(command, cwd=ROOT, env=env, stdout=log, stderr=subprocess.STDOUT, start_new_session=True)
    deadline = time.monotonic() + 30
    while time.monotonic() < deadline:
        try:
            with socket.create_connection((HOST, port), timeout=1):
                return process
        except OSError:
            time.sleep(0.3)
    process.terminate()
    raise SystemExit("gunicorn did not start within 30 s; see test-artifacts/load-gunicorn.log")


def stop_process(process):
    """Stop a process started in its own session (gunicorn, the worker) and whatever it started."""
    if process.poll() is None:
        os.killpg(process.pid, signal.SIGTERM)
        try:
            process.wait(timeout=15)
        except subprocess.TimeoutExpired:
            os.killpg(process.pid, signal.SIGKILL)


class Outage:
    """Takes PostgreSQL away for `seconds`, `after` seconds into the phase, and brings it back."""

    def __init__(self, mode, database_url, database, after, seconds):
        self.mode, self.database_url, self.database = mode, database_url, database
        self.after, self.seconds = after, seconds
        self.log = []

    def note(self, text):
        self.log.append(f"{time.strftime('%H:%M:%S')} {text}")

    @staticmethod
    def _ready():
        for _ in range(60):
            if subprocess.run(["pg_isready", "-q", "-h", HOST], check=False).returncode == 0:
                return True
            time.sleep(0.5)
        return False

    def run(self):
        time.sleep(self.after)
        started = time.monotonic()
        if self.mode == "server":
            version = sorted(os.listdir("/etc/postgresql"))[0]
            command = ["pg_ctlcluster", "--skip-systemctl-redirect", version, "main"]
            try:
                self.note(f"pg_ctlcluster {version} main stop")
                subprocess.run([*command, "stop"], check=False, timeout=30)  # fast mode
                time.sleep(self.seconds)
            finally:
                for _ in range(3):  # whatever happened above, PostgreSQL is started again
                    self.note(f"pg_ctlcluster {version} main start")
                    subprocess.run([*command, "start"], check=False, timeout=60)
                    if self._ready():
                        break
        else:
            self.note(f"refusing connections to {self.database} and closing the open ones")
            try:
                admin_sql(self.database_url, f'ALTER DATABASE "{self.database}" ALLOW_CONNECTIONS false')
                admin_sql(self.database_url,
                          f"SELECT pg_terminate_backend(pid) FROM pg_stat_activity WHERE datname = '{self.database}'")
                time.sleep(self.seconds)
            finally:
                admin_sql(self.database_url, f'ALTER DATABASE "{self.database}" ALLOW_CONNECTIONS true')
            self.note(f"{self.database} accepts connections again")
        self.down_s = round(time.monotonic() - started, 1)


def sign_in_all(tablets, seconds=120):
    """Every tablet signs in before the clock starts (password hashing is deliberately slow)."""
    stats = Stats()
    for tablet in tablets:
        tablet.stats = stats
    until = time.monotonic() + seconds

    def sign_in(tablet):
        for _ in range(5):
            if tablet.sign_in() or time.monotonic() >= until:
                return
            time.sleep(1)

    threads = [threading.Thread(target=sign_in, args=(t,), daemon=True) for t in tablets]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join(timeout=seconds + REQUEST_TIMEOUT_S)
    return {"signed_in": sum(t.signed_in for t in tablets), "latency_ms": latency_ms(stats.latency["sign_in"])}


def run_phase(name, tablets, seconds, think_s, outage=None, drain_s=60, ramp_s=0.0, beside=None):
    """Every tablet works for `seconds`, starting one by one over the first `ramp_s`; `beside`, a thread started
    with the tablets (the import), is waited for before the pending submissions are drained."""
    stats = Stats()
    for tablet in tablets:
        tablet.stats = stats
    stop = threading.Event()
    until = time.monotonic() + seconds

    def starting(tablet, delay):
        time.sleep(delay)
        tablet.run(until, think_s, stop)

    threads = [threading.Thread(target=starting, args=(t, ramp_s * n / len(tablets)), daemon=True)
               for n, t in enumerate(tablets)]
    outage_thread = threading.Thread(target=outage.run, daemon=True) if outage else None
    started = time.monotonic()
    for thread in threads:
        thread.start()
    if outage_thread:
        outage_thread.start()
    if beside is not None:
        beside.start()
    for thread in threads:
        thread.join(timeout=seconds + REQUEST_TIMEOUT_S * 4 + 30)
    if outage_thread:
        outage_thread.join(timeout=120)
    pending_before_drain = sum(len(t.pending) for t in tablets)
    drain_until = time.monotonic() + drain_s
    drains = [threading.Thread(target=t.drain, args=(drain_until,), daemon=True) for t in tablets]
    for thread in drains:
        thread.start()
    for thread in drains:
        thread.join(timeout=drain_s + REQUEST_TIMEOUT_S * 4 + 30)
    stop.set()
    return {
        "phase": name, "seconds": round(time.monotonic() - started, 1), "stats": stats, "started": started,
        "requests": dict(sorted(stats.outcomes.items())),
        "latency_ms": {"entry_page_get": latency_ms(stats.latency["get"]), "inspection_post": latency_ms(stats.latency["post"]),
                       "sign_in_again": latency_ms(stats.latency["sign_in"])},
        "pending_before_drain": pending_before_drain, "pending_after_drain": sum(len(t.pending) for t in tablets),
        "client_errors": stats.errors[:10], "outage": outage.log if outage else None,
        "outage_s": getattr(outage, "down_s", None) if outage else None,
    }


def import_overlap(phase, bulk, ramp_s, seconds):
    """The posts of the phase that overlapped the import (from its upload to its being seen finished) against the
    posts after the tablets' start that did not: latency of each, and when the import ran (seconds into the phase)."""
    start, end = bulk.uploaded_after_s, bulk.finished_after_s
    stats, started = phase["stats"], phase["started"]
    during, outside = [], []
    for latency, ended_at in zip(stats.latency["post"], stats.ended_at["post"]):
        post_end = ended_at - started
        post_start = post_end - latency
        if start is not None and post_end >= start and (end is None or post_start <= end):
            during.append(latency)
        elif post_start >= ramp_s:
            outside.append(latency)
    return {
        "upload_s": bulk.upload_s, "uploaded_after_phase_start_s": _rounded(start),
        "seen_working_after_s": _rounded(bulk.running_after_s), "at_seen_working": bulk.at_running,
        "seen_finished_after_phase_start_s": _rounded(end),
        "finished_within_the_phase": end is not None and end <= seconds,
        "inspection_post_while_importing_ms": latency_ms(during),
        "inspection_post_rest_of_phase_ms": latency_ms(outside),
    }


def _rounded(seconds):
    return None if seconds is None else round(seconds, 1)


def write_timeline(path, phase):
    """Each post of the phase as a line: seconds from the phase's start to the post's end, and its latency in ms."""
    stats = phase["stats"]
    with open(path, "w") as out:
        for seconds, ended_at in zip(stats.latency["post"], stats.ended_at["post"]):
            out.write(f"{ended_at - phase['started']:.3f} {seconds * 1000:.0f}\n")


def check_bulk(site_code="bulk"):
    """The imported readings: how many inspections, whether any is there twice, whether each has all its cells."""
    from django.db import connection
    from django.db.models import Count

    from fleetcare.readings.models import Inspection

    connection.close()
    rows = Inspection.objects.filter(battery__site__code=site_code).values("battery_id", "taken_at").annotate(
        n=Count("id", distinct=True), cells=Count("cells"))
    return {"inspections": sum(r["n"] for r in rows), "twice": sum(1 for r in rows if r["n"] > 1),
            "incomplete": sum(1 for r in rows if r["cells"] != CELLS * r["n"])}


def check_store(tablets, site_code="load"):
    """Stored inspections equal the distinct UUIDs the tablets had confirmed; each has all its cells."""
    from django.db import connection
    from django.db.models import Count

    from fleetcare.readings.models import Inspection

    connection.close()
    stored = list(Inspection.objects.filter(battery__site__code=site_code).annotate(n=Count("cells"))
                  .values_list("client_uuid", "n", "id"))
    stored_uuids = [str(u) for u, _, _ in stored]
    confirmed = {}
    for tablet in tablets:
        confirmed.update(tablet.confirmed)
    sent = set().union(*(t.sent for t in tablets))
    pending = {s["client_uuid"] for t in tablets for s in t.pending}
    by_uuid = {str(u): pk for u, _, pk in stored}
    return {
        "stored": len(stored), "distinct_confirmed": len(confirmed), "distinct_sent": len(sent),
        "still_pending": len(pending),
        "duplicates": len(stored_uuids) - len(set(stored_uuids)),
        "not_sent_by_any_tablet": len(set(stored_uuids) - sent),
        "confirmed_but_missing": len(set(confirmed) - set(stored_uuids)),
        "confirmed_with_other_id": sum(1 for u, pk in confirmed.items() if by_uuid.get(u) not in (None, pk)),
        "incomplete_inspections": sum(1 for _, n, _ in stored if n != CELLS),
        "stored_but_never_confirmed": len(set(stored_uuids) - set(confirmed)),
    }


def main():
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--tablets", type=int, default=50)
    parser.add_argument("--seconds", type=float, default=60)
    parser.add_argument("--think", type=float, default=3.0, help="Mean seconds a tablet waits between submissions.")
    parser.add_argument("--workers", type=int, default=2)
    parser.add_argument("--threads", type=int, default=4, help="gunicorn threads per worker (gthread).")
    parser.add_argument("--via", choices=["form", "api"], default="form",
                        help="Submit through the tablet form (GET for the CSRF token, then POST) or the JSON API.")
    parser.add_argument("--outage", choices=["none", "database", "server"], default="none")
    parser.add_argument("--outage-seconds", type=float, default=8)
    parser.add_argument("--outage-phase-seconds", type=float, default=40)
    parser.add_argument("--import-rows", type=int, default=0,
                        help="Cell rows of a CSV import the background worker runs during the steady phase (0: none).")
    parser.add_argument("--ramp-seconds", type=float, default=5.0,
                        help="The tablets start one by one over this many seconds of the steady phase (0: all at once).")
    parser.add_argument("--import-after", type=float, default=15.0,
                        help="Seconds into the steady phase at which the import is uploaded (with --import-rows).")
    parser.add_argument("--json", dest="json_path")
    parser.add_argument("--timeline", help="Write each post of the steady phase to this file: seconds into the phase, latency in ms.")
    args = parser.parse_args()
    if not 1 <= args.tablets <= 200 or not 1 <= args.seconds <= 600 or not 1 <= args.outage_seconds <= 19:
        raise SystemExit("bounds: 1-200 tablets, 1-600 s, an outage of 1-19 s")

    database_url = os.environ.get("DATABASE_URL", "postgres://postgres@127.0.0.1:5432/fc_load")
    database = urllib.parse.urlparse(database_url).path.lstrip("/")
    if not database_url.startswith("postgres") or database in ("", "fleetcare", "postgres"):
        raise SystemExit("give DATABASE_URL=postgres://.../<a database of the load test's own>, e.g. fc_load; it is dropped")
    if urllib.parse.urlparse(database_url).hostname not in ("127.0.0.1", "localhost"):
        raise SystemExit("the load test runs on loopback only")
    os.environ["DATABASE_URL"] = database_url
    (ROOT / "test-artifacts").mkdir(exist_ok=True)
    admin_sql(database_url, f'DROP DATABASE IF EXISTS "{database}" WITH (FORCE)')
    admin_sql(database_url, f'CREATE DATABASE "{database}"')
    setup_django()
    world = create_world(args.tablets)
    from django.db import connection

    connection.close()

    port = free_port()
    env = dict(os.environ, DATABASE_URL=database_url, DEBUG="0", ALLOWED_HOSTS=HOST, LOG_LEVEL="ERROR",
               SECRET_KEY=os.environ.get("SECRET_KEY", "load-test-only-" + uuid.uuid4().hex))
    server = start_gunicorn(port, args.workers, args.threads, env)
    worker = start_worker(env) if args.import_rows else None
    base = f"http://{HOST}:{port}"
    rng = random.Random(2026)
    tablets = [Tablet(base, username, pk, None, random.Random(rng.random()), args.via) for username, pk in world]
    results = {"date": dt.datetime.now(dt.timezone.utc).isoformat(timespec="seconds"), "cpus": os.cpu_count(),
               "tablets": args.tablets, "via": args.via, "gunicorn": f"{args.workers} workers x {args.threads} threads", "phases": []}
    try:
        results["sign_in"] = sign_in_all(tablets)
        bulk = beside = None
        phase_started = time.monotonic()
        if args.import_rows:
            path = ROOT / "test-artifacts" / "load-import.csv"
            readings = write_import_file(path, args.import_rows)
            bulk = BulkImport(base, path)
            results["import"] = {"rows": args.import_rows, "inspections": readings}
            phase_started = time.monotonic()
            beside = threading.Thread(target=bulk.run_beside, args=(phase_started, args.import_after, args.seconds),
                                      daemon=True)
        steady = run_phase("steady", tablets, args.seconds, args.think, drain_s=30, ramp_s=args.ramp_seconds,
                           beside=beside)
        if bulk is not None:
            beside.join(timeout=5)
            if bulk.error:
                raise SystemExit(bulk.error)
            results["import"]["finished"] = bulk.wait()
            results["import"] |= import_overlap(steady, bulk, args.ramp_seconds, args.seconds)
            results["import"]["stored"] = check_bulk()
        if args.timeline:
            write_timeline(args.timeline, steady)
        steady["store"] = check_store(tablets)
        results["phases"].append(steady)
        if args.outage != "none":
            outage = Outage(args.outage, database_url, database, after=args.outage_phase_seconds / 3,
                            seconds=args.outage_seconds)
            phase = run_phase(f"outage ({args.outage})", tablets, args.outage_phase_seconds, args.think, outage, drain_s=90)
            phase["store"] = check_store(tablets)
            results["phases"].append(phase)
    finally:
        stop_process(server)
        if worker is not None:
            stop_process(worker)
        if args.outage == "server" and not Outage._ready():  # never leave PostgreSQL down
            version = sorted(os.listdir("/etc/postgresql"))[0]
            subprocess.run(["pg_ctlcluster", "--skip-systemctl-redirect", version, "main", "start"], check=False, timeout=60)

    for phase in results["phases"]:
        phase.pop("stats", None)
        phase.pop("started", None)
    failures = verdict(results)
    results["failures"] = failures
    print(json.dumps(results, indent=2))
    if args.json_path:
        Path(args.json_path).write_text(json.dumps(results, indent=2))
    print("PASS" if not failures else "FAIL: " + "; ".join(failures))
    return 1 if failures else 0


def verdict(results):
    failures = []
    imported = results.get("import")
    if imported:
        finished, stored = imported.get("finished", {}), imported.get("stored", {})
        if finished.get("state") != "done":
            failures.append(f"the background import ended {finished.get('state')!r}, not done")
        if stored.get("inspections") != imported["inspections"] or stored.get("twice") or stored.get("incomplete"):
            failures.append(f"the background import stored {stored}, expected {imported['inspections']} inspections")
    if results.get("sign_in", {}).get("signed_in") != results["tablets"]:
        failures.append(f"only {results.get('sign_in', {}).get('signed_in')} of {results['tablets']} tablets signed in")
    for phase in results["phases"]:
        store = phase["store"]
        name = phase["phase"]
        if store["stored"] != store["distinct_confirmed"]:
            failures.append(f"{name}: {store['stored']} stored, {store['distinct_confirmed']} distinct submissions confirmed")
        for key in ("duplicates", "not_sent_by_any_tablet", "confirmed_but_missing", "confirmed_with_other_id",
                    "incomplete_inspections", "still_pending", "stored_but_never_confirmed"):
            if store[key]:
                failures.append(f"{name}: {key} = {store[key]}")
        if phase["client_errors"]:
            failures.append(f"{name}: client errors {phase['client_errors'][:3]}")
        if name == "steady":
            bad = {k: v for k, v in phase["requests"].items() if k.split()[1] not in ("200", "201", "302")}
            if bad:
                failures.append(f"steady: responses other than 200/201/302: {bad}")
        else:
            bad = {k: v for k, v in phase["requests"].items()
                   if k.split()[1] not in ("0", "200", "201", "302") and not k.split()[1].startswith("5")}
            if bad:
                failures.append(f"{name}: responses other than 200/201/302/5xx/refused: {bad}")
    return failures


if __name__ == "__main__":
    sys.exit(main())

"""DATABASE_REPLICA_URL against a real streaming standby that the test starts on this machine: pg_basebackup from the
local PostgreSQL into a temporary directory, a second server on another port replaying the primary's changes.
The overview reads from it; while it lags the page says how old its figures are."""
import datetime as dt
import os
import shutil
import socket
import subprocess
import tempfile
import time
from decimal import Decimal

import pytest
from django.db import connection, connections
from django.test.utils import CaptureQueriesContext
from django.urls import reverse
from django.utils import timezone

from fleetcare import replica
from fleetcare.fleet.models import Battery
from fleetcare.readings.services import CellEntry, record_inspection

pytestmark = [
    pytest.mark.skipif(connection.vendor != "postgresql", reason="a streaming standby is PostgreSQL's"),
    pytest.mark.django_db(transaction=True),
]


def _bin(name):
    versions = sorted(os.listdir("/usr/lib/postgresql"), key=lambda v: int(v)) if os.path.isdir("/usr/lib/postgresql") else []
    for version in reversed(versions):
        path = f"/usr/lib/postgresql/{version}/bin/{name}"
        if os.path.exists(path):
            return path
    return shutil.which(name) or pytest.skip(f"{name} is not installed")


def _as_postgres(argv):
    """The server refuses to run as root: run it as the postgres OS user when we are root."""
    return ["runuser", "-u", "postgres", "--", *argv] if os.geteuid() == 0 else argv


def _free_port():
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def _wait(condition, what, seconds=60):
    deadline = time.monotonic() + seconds
    while time.monotonic() < deadline:
        if condition():
            return
        time.sleep(0.2)
    raise AssertionError(f"timed out waiting for {what}")


@pytest.fixture
def standby():
    """A hot standby of the local PostgreSQL on a free port; yields the port."""
    primary = connections["default"].settings_dict
    home = tempfile.mkdtemp(prefix="fc-standby-")
    data = os.path.join(home, "data")
    if os.geteuid() == 0:
        shutil.chown(home, "postgres", "postgres")
    port = _free_port()
    process = None
    try:
        backup = subprocess.run(_as_postgres([
            _bin("pg_basebackup"), "-h", primary["HOST"] or "127.0.0.1", "-p", str(primary["PORT"] or 5432),
            "-U", primary["USER"] or "postgres", "-D", data, "-X", "stream", "-R", "--checkpoint=fast",
        ]), capture_output=True, text=True, timeout=300)
        if backup.returncode and "replication" in backup.stderr and not os.environ.get("CI"):
            pytest.skip(f"the local PostgreSQL refuses replication connections: {backup.stderr.strip()}")
        assert backup.returncode == 0, backup.stderr
        # A Debian cluster keeps its configuration outside the data directory: give the copy its own.
        for name, text in (("postgresql.conf", ""), ("pg_ident.conf", ""),
                           ("pg_hba.conf", "local all all trust\nhost all all 127.0.0.1/32 trust\n")):
            with open(os.path.join(data, name), "w") as f:
                f.write(text)
            if os.geteuid() == 0:
                shutil.chown(os.path.join(data, name), "postgres", "postgres")
        log = open(os.path.join(home, "standby.log"), "w")
        process = subprocess.Popen(_as_postgres([
            _bin("postgres"), "-D", data, "-p", str(port), "-c", "listen_addresses=127.0.0.1",
            "-c", f"unix_socket_directories={home}", "-c", "hot_standby=on",
            "-c", "shared_buffers=16MB", "-c", "logging_collector=off", "-c", "cluster_name=fc-test-standby",
        ]), stdout=log, stderr=subprocess.STDOUT)
        _wait(lambda: subprocess.run([_bin("pg_isready"), "-q", "-h", "127.0.0.1", "-p", str(port)]).returncode == 0
              or process.poll() is not None, "the standby to accept connections")
        assert process.poll() is None, open(os.path.join(home, "standby.log")).read()
        yield port
    finally:
        if process is not None and process.poll() is None:
            subprocess.run(_as_postgres([_bin("pg_ctl"), "stop", "-D", data, "-m", "fast", "-w"]), capture_output=True,
                           timeout=60)
            try:
                process.wait(timeout=30)
            except subprocess.TimeoutExpired:
                process.kill()
                process.wait()
        shutil.rmtree(home, ignore_errors=True)


@pytest.fixture
def replica_alias(standby, settings):
    """The 'replica' database, as DATABASE_REPLICA_URL declares it, pointing at the standby (a connection made
    here, beside the test database's own)."""
    primary = connections["default"].settings_dict
    settings.DATABASE_REPLICA_URL = f"postgres://{primary['USER']}@127.0.0.1:{standby}/{primary['NAME']}"
    connections[replica.REPLICA] = connections["default"].__class__(
        {**primary, "HOST": "127.0.0.1", "PORT": standby}, alias=replica.REPLICA)
    try:
        yield connections[replica.REPLICA]
    finally:
        connections[replica.REPLICA].close()
        del connections[replica.REPLICA]


def _one(alias, sql):
    with connections[alias].cursor() as cursor:
        cursor.execute(sql)
        return cursor.fetchone()[0]


def _caught_up():
    """The standby has replayed everything the primary has written so far."""
    target = _one("default", "SELECT pg_current_wal_lsn()::text")
    return _one(replica.REPLICA, f"SELECT pg_last_wal_replay_lsn() >= '{target}'::pg_lsn")


def _received_but_not_replayed():
    target = _one("default", "SELECT pg_current_wal_lsn()::text")
    return _one(replica.REPLICA, f"SELECT pg_last_wal_receive_lsn() >= '{target}'::pg_lsn"
                                 f" AND pg_last_wal_replay_lsn() < '{target}'::pg_lsn")


def _read(battery, user, when):
    record_inspection(battery=battery, user=user, taken_at=when, situation="charged", temp_c=Decimal(25),
                      cells=[CellEntry(position=p, sg=Decimal("1.280")) for p in range(1, 25)])


def _overview(client):
    with CaptureQueriesContext(connections[replica.REPLICA]) as on_replica:
        response = client.get(reverse("dashboard:home"))
    assert response.status_code == 200
    return response, len(on_replica)


def test_the_overview_reads_the_standby_and_says_how_old_its_figures_are_while_it_lags(
    battery, supervisor, client, settings, replica_alias
):
    settings.REPLICA_LAG_NOTE_SECONDS = 3  # the default is 10 s; shorter, so the test waits less
    now = timezone.now()
    _read(battery, supervisor, now - dt.timedelta(hours=2))
    client.force_login(supervisor)
    _wait(_caught_up, "the standby to replay the first reading")
    assert _one(replica.REPLICA, "SELECT pg_is_in_recovery()") is True

    response, replica_queries = _overview(client)
    assert replica_queries > 0  # the figures came from the standby
    assert response.context["battery_count"] == 1
    assert b"fc-figures-as-of" not in response.content  # caught up: no note

    # The standby stops replaying (as it would behind a long query or a slow disk); the primary goes on.
    _one(replica.REPLICA, "SELECT pg_wal_replay_pause()::text")
    Battery.objects.create(serial="TW-NEW", profile=battery.profile, site=battery.site, in_service_date=now.date())
    _wait(_received_but_not_replayed, "the standby to receive the new battery without replaying it")
    replayed_at = _one(replica.REPLICA, "SELECT pg_last_xact_replay_timestamp()")
    _wait(lambda: (timezone.now() - replayed_at).total_seconds() > 3.5, "the standby to fall 3 s behind")

    response, _ = _overview(client)
    assert response.context["battery_count"] == 1  # the new battery is not on the standby yet
    assert response.context["figures_as_of"] == replayed_at
    local = timezone.localtime(replayed_at)
    assert f"Figures as of {local:%H:%M}" in response.content.decode()
    # Pages that are not dashboards read the primary: the new battery is there at once.
    assert client.get(reverse("fleet:battery", args=[Battery.objects.get(serial="TW-NEW").pk])).status_code == 200

    _one(replica.REPLICA, "SELECT pg_wal_replay_resume()::text")
    _wait(_caught_up, "the standby to catch up")
    response, _ = _overview(client)
    assert response.context["battery_count"] == 2
    assert b"fc-figures-as-of" not in response.content


def test_writes_go_to_the_primary_even_inside_a_replica_page(settings):
    settings.DATABASE_REPLICA_URL = "postgres://postgres@127.0.0.1:5433/fleetcare"
    router = replica.ReplicaRouter()
    reads = replica.reads_from_replica(lambda: router.db_for_read(Battery))
    writes = replica.reads_from_replica(lambda: router.db_for_write(Battery))
    assert reads() == replica.REPLICA and writes() == "default"
    assert router.db_for_read(Battery) is None  # outside such a page: the primary
    settings.DATABASE_REPLICA_URL = ""
    assert reads() is None  # no replica configured: every read on the primary

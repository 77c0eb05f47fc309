"""Reads that may come from a read-only copy of the database (DATABASE_REPLICA_URL, a PostgreSQL streaming standby).

Only views marked `@reads_from_replica` (the dashboards and the exports: pages that show figures, never a
form that was just sent) read there; every write, and every other page, uses the primary. Without a replica
configured nothing changes. A standby may lag: `freshness` tells the page how old its figures are.
"""
import contextvars
import functools

from django.conf import settings
from django.db import connections
from django.utils import timezone

REPLICA = "replica"
_reading_from_replica = contextvars.ContextVar("reading_from_replica", default=False)


def configured():
    return bool(settings.DATABASE_REPLICA_URL)


class ReplicaRouter:
    """Reads inside a `reads_from_replica` view go to the replica; writes always to the primary."""

    def db_for_read(self, model, **hints):
        return REPLICA if _reading_from_replica.get() and configured() else None

    def db_for_write(self, model, **hints):
        return "default"

    def allow_relation(self, obj1, obj2, **hints):
        return True  # the replica is a copy of the primary: the same rows

    def allow_migrate(self, db, app_label, model_name=None, **hints):
        return db != REPLICA  # a standby replays the primary's schema; it is never migrated


def reads_from_replica(view):
    """Run this view's reads (its template's included) on the replica, if one is configured."""

    @functools.wraps(view)
    def wrapper(*args, **kwargs):
        token = _reading_from_replica.set(True)
        try:
            return view(*args, **kwargs)
        finally:
            _reading_from_replica.reset(token)

    return wrapper


def replay_state(alias=REPLICA):
    """(caught_up, last replayed commit time) of a standby: caught up when it has replayed all the changes it
    received. None for a database that is not a standby."""
    with connections[alias].cursor() as cursor:
        cursor.execute(
            "SELECT pg_is_in_recovery(), pg_last_wal_receive_lsn() IS NOT DISTINCT FROM pg_last_wal_replay_lsn(),"
            " pg_last_xact_replay_timestamp()"
        )
        in_recovery, caught_up, replayed_at = cursor.fetchone()
    return (caught_up, replayed_at) if in_recovery else None


def freshness(request):
    """Context processor: `figures_as_of`, the time of the latest change the page's figures include, when the
    page read a replica that is behind the primary by more than REPLICA_LAG_NOTE_SECONDS; otherwise None."""
    if not (_reading_from_replica.get() and configured()) or connections[REPLICA].vendor != "postgresql":
        return {"figures_as_of": None}
    state = replay_state()
    if state is None or state[0] or state[1] is None:
        return {"figures_as_of": None}
    behind = (timezone.now() - state[1]).total_seconds()
    return {"figures_as_of": state[1] if behind >= settings.REPLICA_LAG_NOTE_SECONDS else None}

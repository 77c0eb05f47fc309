"""Run the finding rules over a set of batteries and store the result.

Loading is done in a fixed number of queries whatever the number of batteries (window functions
pick each battery's latest readings), then every rule runs in Python, then findings are opened,
refreshed or cleared in a few bulk statements. An active finding is never duplicated: the
database holds at most one open-or-acknowledged finding per battery and kind.
"""
import hashlib
import json
import logging
from collections import defaultdict
from datetime import timedelta

from django.core.serializers.json import DjangoJSONEncoder
from django.db import connection, transaction
from django.db.models import Count, Exists, F, Max, Min, OuterRef, Q
from django.db.models.expressions import Window
from django.db.models.functions import RowNumber
from django.utils import timezone

from fleetcare.care import policy as care_policy
from fleetcare.care import rules
from fleetcare.care.models import Finding, Policy
from fleetcare.fleet.models import Battery, Fitting
from fleetcare.planner import due
from fleetcare.planner import policy as planning_policy
from fleetcare.planner.models import Policy as PlanningPolicy
from fleetcare.readings.models import CellReading, Inspection, WaterTopUp

log = logging.getLogger(__name__)

MIN_LOOKBACK_DAYS = 60
BLOCK_READINGS = 4
UPDATED_FIELDS = ["severity", "positions", "persistent", "evidence", "summary", "inspection", "content_digest"]


def _battery_ids(batteries):
    return batteries.values("pk")


def _ranked(queryset, depth, partition):
    return queryset.annotate(
        rank=Window(RowNumber(), partition_by=partition, order_by=[F("taken_at").desc(), F("pk").desc()])
    ).filter(rank__lte=depth)


# On PostgreSQL, each battery's latest readings are read with a LATERAL join: a few index entries per
# battery instead of ranking every reading of its history with a window function (which SQLite keeps).
_LATEST_SQL = """
    SELECT {columns} FROM unnest(%(ids)s::bigint[]) AS b(id)
     CROSS JOIN LATERAL (
        SELECT * FROM {table} i
         WHERE i.battery_id = b.id AND i.is_current AND i.deleted_at IS NULL AND i.taken_at <= %(now)s
           AND i.scope = %(scope)s AND (%(any_situation)s OR i.situation = ANY(%(situations)s))
         ORDER BY i.taken_at DESC, i.id DESC LIMIT %(depth)s) AS i
     ORDER BY i.battery_id, i.taken_at DESC, i.id DESC
"""


# rules.Reading.FIELDS as columns of the inspection aliased `i` in this module's raw statements.
_READING_COLUMNS = ", ".join(f"i.{'id' if name == 'pk' else name}" for name in rules.Reading.FIELDS)


def _latest_all_cells(battery_ids, depth, now, situations=None):
    """Rows (Reading.FIELDS) of each battery's `depth` latest current all-cell inspections, newest first,
    optionally only those in `situations`."""
    if not battery_ids:
        return []
    if connection.vendor == "postgresql":
        with connection.cursor() as cursor:
            cursor.execute(_LATEST_SQL.format(columns=_READING_COLUMNS, table=Inspection._meta.db_table), {
                "ids": list(battery_ids), "now": now, "scope": str(Inspection.Scope.ALL_CELLS), "depth": depth,
                "any_situation": situations is None, "situations": [str(s) for s in situations or ()],
            })
            return cursor.fetchall()
    readings = Inspection.objects.current().filter(
        battery_id__in=battery_ids, taken_at__lte=now, scope=Inspection.Scope.ALL_CELLS
    )
    if situations is not None:
        readings = readings.filter(situation__in=situations)
    ranked = _ranked(readings, depth, [F("battery_id")])
    return list(ranked.order_by("battery_id", "-taken_at", "-pk").values_list(*rules.Reading.FIELDS))


_CELLS_SQL = """
    SELECT inspection_id, array_agg(position ORDER BY position), array_agg(sg_corrected ORDER BY position),
           array_agg(volts ORDER BY position), array_agg(level ORDER BY position)
      FROM {table} WHERE inspection_id = ANY(%(ids)s) GROUP BY inspection_id
"""


def cells_of(inspection_ids):
    """{inspection id: its cells as rules.Cells, by position}. On PostgreSQL one row per reading (its cells as
    arrays) rather than one per cell: a fleet's pass reads some twenty cells of each of tens of thousands."""
    if connection.vendor == "postgresql":
        with connection.cursor() as cursor:
            cursor.execute(_CELLS_SQL.format(table=CellReading._meta.db_table), {"ids": list(inspection_ids)})
            return {pk: tuple(map(rules.Cell, *columns)) for pk, *columns in cursor.fetchall()}
    return cells_of_by_rows(inspection_ids)


def cells_of_by_rows(inspection_ids):
    """cells_of, one row per cell (SQLite, and the reference the PostgreSQL form is tested against)."""
    cells = defaultdict(list)
    for inspection_id, *values in (
        CellReading.objects.filter(inspection_id__in=list(inspection_ids))
        .order_by("inspection_id", "position")
        .values_list("inspection_id", *rules.Cell.FIELDS)
    ):
        cells[inspection_id].append(rules.Cell(*values))
    return {pk: tuple(found) for pk, found in cells.items()}


def _with_cells(rows, per_battery=None):
    """Readings with their cells (one more query), in the order of the rows (newest first per battery); with
    per_battery, only each battery's first that many readings get their cells."""
    wanted, seen = [], defaultdict(int)
    battery_at = rules.Reading.FIELDS.index("battery_id")
    for row in rows:
        seen[row[battery_at]] += 1
        if per_battery is None or seen[row[battery_at]] <= per_battery:
            wanted.append(row[0])
    cells = cells_of(wanted)
    return [rules.Reading(*row, cells=cells.get(row[0], ())) for row in rows]


# Read with the batteries from their kept state (fleetcare.readings.state): no query over each battery's history.
KEPT = {
    "kept_last_charge_at": F("state__post_charge_at"),
    "kept_first_charge_at": F("state__first_post_charge_at"),
    "kept_charges": F("state__charge_count"),
    "kept_last_top_up_at": F("state__watered_at"),
}


def _charges_and_last_top_up(battery_list, data, ids, now):
    """Post-charge readings logged (first, last, how many) and the last top-up, as of `now`.

    The kept state covers all history. Readings later than the present are refused, so it answers for `now`
    whenever nothing it holds is later than `now`. Only a pass run for an earlier moment than a battery's
    latest charge or top-up (tests and replays of a past day) counts from history up to `now` instead:
    two queries more, still fixed whatever the fleet size."""
    if not any(t is not None and t > now for b in battery_list for t in (b.kept_last_charge_at, b.kept_last_top_up_at)):
        for b in battery_list:
            d = data[b.pk]
            d.last_charge_at, d.first_charge_at = b.kept_last_charge_at, b.kept_first_charge_at
            d.charges_logged, d.last_top_up_at = b.kept_charges or 0, b.kept_last_top_up_at
        return
    stats = (Inspection.objects.current().post_charge().filter(battery_id__in=ids, taken_at__lte=now)
             .order_by().values("battery_id").annotate(last=Max("taken_at"), first=Min("taken_at"), n=Count("*")))
    for row in stats:
        d = data[row["battery_id"]]
        d.last_charge_at, d.first_charge_at, d.charges_logged = row["last"], row["first"], row["n"]
    top_ups = (WaterTopUp.objects.current().filter(battery_id__in=ids, done_at__lte=now)
               .order_by().values("battery_id").annotate(last=Max("done_at")))
    for row in top_ups:
        data[row["battery_id"]].last_top_up_at = row["last"]


# --- The look-back readings the rules read --------------------------------------------------------------
#
# A battery's look-back holds some hundred readings (a pilot cell before every charge, all cells every
# week), but the rules read few of them (fleetcare.care.rules, each reading `recent` newest first):
#  - left discharged: the latest reading with a state of charge;
#  - sulfation (standing partly charged): the readings since the latest one at or above its limit, and that one;
#  - deep discharge: the readings under its limit in its event window;
#  - water before charge: the readings that report a low level;
#  - watering overdue (the planner's charge count): the post-charge readings of its charge window.
# Only those are read, each from an index, so a pass costs what the fleet's events cost rather than what its
# routine readings cost. A further reading of the look-back would not change any rule's answer (a test runs
# the rules on both and compares), so the limits taken are the highest any policy sets.

# On PostgreSQL, per battery from the (battery, taken_at) index: its latest reading at or above the limit, and
# every reading under the limit since (or in the whole look-back when there is none).
_RUNS_SQL = """
    WITH high AS (
        SELECT b.id AS battery_id, coalesce(h.taken_at, %(since)s) AS run_from, h.id
          FROM unnest(%(ids)s::bigint[]) AS b(id)
          LEFT JOIN LATERAL (
            SELECT i.id, i.taken_at FROM {table} i
             WHERE i.battery_id = b.id AND i.is_current AND i.deleted_at IS NULL
               AND i.taken_at >= %(since)s AND i.taken_at <= %(now)s AND i.soc_percent >= %(high)s
             ORDER BY i.taken_at DESC, i.id DESC LIMIT 1) AS h ON true)
    SELECT {columns} FROM high CROSS JOIN LATERAL (
        SELECT * FROM {table} i
         WHERE i.battery_id = high.battery_id AND i.is_current AND i.deleted_at IS NULL
           AND i.taken_at >= high.run_from AND i.taken_at <= %(now)s AND (i.soc_percent < %(high)s OR i.id = high.id)
        OFFSET 0  -- kept a subquery, so each battery's rows come from the index, not from a join over all readings
    ) AS i
"""


def _runs(battery_ids, since, now, high):
    """Rows (rules.Reading.FIELDS) of each battery's latest reading at or above `high` % state of charge in
    [since, now], and of its readings under `high` % after it (all of them in [since, now] without one)."""
    if connection.vendor == "postgresql":
        with connection.cursor() as cursor:
            cursor.execute(_RUNS_SQL.format(table=Inspection._meta.db_table, columns=_READING_COLUMNS),
                           {"ids": battery_ids, "since": since, "now": now, "high": high})
            return cursor.fetchall()
    window = Inspection.objects.current().filter(battery_id__in=battery_ids, taken_at__gte=since, taken_at__lte=now)
    highs = {battery: (pk, taken_at) for battery, pk, taken_at in
             _ranked(window.filter(soc_percent__gte=high), 1, [F("battery_id")]).values_list("battery_id", "pk", "taken_at")}
    battery_at, taken_at_at = rules.Reading.FIELDS.index("battery_id"), rules.Reading.FIELDS.index("taken_at")
    high_ids = [high_id for high_id, _ in highs.values()]
    return [row for row in window.filter(Q(soc_percent__lt=high) | Q(pk__in=high_ids)).values_list(*rules.Reading.FIELDS)
            if row[battery_at] not in highs or row[taken_at_at] >= highs[row[battery_at]][1]]


def _recent(data, since, now, charge_window_start):
    """The readings of the look-back that a rule reads (above), as rules.Readings, newest first."""
    ids = list(data)
    high = max(d.policy.partial_charge_soc_percent for d in data.values())
    deep = max(d.policy.deep_discharge_soc_percent for d in data.values())
    window = Inspection.objects.current().filter(battery_id__in=ids, taken_at__gte=since, taken_at__lte=now)
    pk = rules.Reading.FIELDS.index("pk")
    rows = {row[pk]: row for row in _runs(ids, since, now, high)}
    events_since = now - timedelta(days=max(int(d.policy.event_window_days) for d in data.values()))
    # Two statements, not one with OR: each is served by its own partial index (readings under 30 %, readings
    # after charge), where the OR was served by reading every reading in the look-back.
    for readings in (window.filter(soc_percent__lt=deep, taken_at__gte=events_since),
                     window.filter(situation__in=Inspection.POST_CHARGE, taken_at__gte=charge_window_start)):
        rows.update((row[pk], row) for row in readings.values_list(*rules.Reading.FIELDS))
    # From the (rare, partially indexed) low-level cells to their readings, not the other way round.
    low_levels = CellReading.objects.filter(
        level=CellReading.Level.LOW, inspection__battery_id__in=ids,
        inspection__taken_at__gte=since, inspection__taken_at__lte=now,
    ).values("inspection_id")
    low = {row[pk]: row for row in window.filter(pk__in=low_levels).values_list(*rules.Reading.FIELDS)}
    rows.update(low)
    taken_at = rules.Reading.FIELDS.index("taken_at")
    ordered = sorted(rows.values(), key=lambda row: (row[taken_at], row[pk]), reverse=True)  # newest first
    return [rules.Reading(*row, has_low_level=row[pk] in low) for row in ordered]


def load(batteries, now):
    """ReadingHistory for every battery in the queryset, in a fixed number of queries."""
    battery_list = list(batteries.select_related("profile", "site").annotate(**KEPT).order_by("pk"))
    if not battery_list:
        return []
    ids = _battery_ids(batteries)
    policies = list(Policy.objects.select_related("site", "profile"))
    resolved = {}  # batteries of one profile at one site share their thresholds: resolved once
    for b in battery_list:
        if (b.site_id, b.profile_id) not in resolved:
            resolved[b.site_id, b.profile_id] = care_policy.resolve(b, policies)
    data = {b.pk: rules.ReadingHistory(battery=b, policy=resolved[b.site_id, b.profile_id], now=now)
            for b in battery_list}
    depth = max(2, max(int(d.policy.sulfation_inspections) for d in data.values()))
    lookback_days = max(
        [MIN_LOOKBACK_DAYS] + [int(getattr(d.policy, name)) for d in data.values()
                               for name in ("event_window_days", "water_use_window_days")]
    )
    since = now - timedelta(days=lookback_days + 1)

    # The cell rules (weak cell, spread) read the cells of the latest few post-charge readings; sulfation reads
    # only the summaries of the older ones, so their cells are not loaded.
    cell_depth = max(2, max(int(d.policy.spread_readings_in_a_row) for d in data.values()))
    post_charge = _latest_all_cells(list(data), depth, now, situations=Inspection.POST_CHARGE)
    for reading in _with_cells(post_charge, per_battery=cell_depth):
        data[reading.battery_id].post_charge.append(reading)

    if any(b.profile.reads_by_block and b.profile.monoblocks > 1 for b in battery_list):
        sealed = [b.pk for b in battery_list if b.profile.technology in ("agm", "gel")]
        for reading in _with_cells(_latest_all_cells(sealed, BLOCK_READINGS, now)):
            data[reading.battery_id].block_readings.append(reading)

    window_start = now - timedelta(days=due.CHARGE_WINDOW_DAYS)
    for reading in _recent(data, since, now, window_start):
        data[reading.battery_id].recent.append(reading)

    _charges_and_last_top_up(battery_list, data, ids, now)

    # Only "low" reports matter, and only while no later reading of that cell says OK: start from the
    # (rare, partially indexed) low reports instead of ranking every cell reading in the history.
    # Conditions on the joined inspection rather than `inspection__in=<queryset>`: the nested form cost
    # PostgreSQL about 80 ms of planning for 100 batteries, for a query that runs in under a millisecond.
    later_ok = CellReading.objects.filter(
        inspection__is_current=True, inspection__deleted_at__isnull=True,
        inspection__battery_id=OuterRef("inspection__battery_id"),
        position=OuterRef("position"), level=CellReading.Level.OK,
        inspection__taken_at__gt=OuterRef("inspection__taken_at"), inspection__taken_at__lte=now,
    )
    levels = (
        CellReading.objects.filter(
            inspection__is_current=True, inspection__deleted_at__isnull=True, inspection__battery_id__in=ids,
            inspection__taken_at__lte=now, level=CellReading.Level.LOW,
        )
        .annotate(battery=F("inspection__battery_id"), taken_at=F("inspection__taken_at"))
        .exclude(Exists(later_ok))
        .order_by("battery", "position", "taken_at")
        .values("battery", "position", "level", "taken_at")
    )
    for row in levels:
        data[row["battery"]].latest_levels[row["position"]] = (row["level"], row["taken_at"])

    top_ups = WaterTopUp.objects.current().filter(battery_id__in=ids, done_at__lte=now, done_at__gte=since)
    for row in top_ups.order_by("-done_at").values_list(*rules.TopUp.FIELDS):
        top_up = rules.TopUp(*row)
        data[top_up.battery_id].top_ups.append(top_up)

    planning = list(PlanningPolicy.objects.select_related("site", "profile"))
    planned = {}
    for d in data.values():
        key = (d.battery.site_id, d.battery.profile_id)
        if key not in planned:
            planned[key] = planning_policy.resolve(*key, planning)
        d.planning = planned[key]
        zone = d.site.tzinfo
        d.charge_dates = [r.taken_at.astimezone(zone).date() for r in d.recent
                          if r.situation in Inspection.POST_CHARGE and r.taken_at >= window_start]

    for fitting in Fitting.objects.filter(battery_id__in=ids).select_related("vehicle").order_by("-fitted_at"):
        data[fitting.battery_id].fittings.append(fitting)

    above_c = min(d.policy.hot_battery_temp_c for d in data.values())
    for row in hot_temperatures(ids, since, now, above_c):
        data[row.battery_id].hot_readings.append(row)
    for d in data.values():
        d.hot_readings.sort(key=lambda r: r.taken_at, reverse=True)
    return [data[b.pk] for b in battery_list]


# Other apps that record electrolyte temperatures (the equalizing record) register a loader here, so a
# hot reading anywhere opens the hot-battery finding without this app importing theirs.
# A loader is called as loader(battery_ids, since, now, above_c) and returns rules.HotReading rows.
TEMPERATURE_SOURCES = []


def register_temperature_source(loader):
    if loader not in TEMPERATURE_SOURCES:
        TEMPERATURE_SOURCES.append(loader)


def hot_temperatures(battery_ids, since, now, above_c):
    """Readings of electrolyte temperature over `above_c` between `since` and `now`: inspections, their cells,
    and every registered source. One query each."""
    current = Inspection.objects.current().filter(battery_id__in=battery_ids, taken_at__gte=since, taken_at__lte=now)
    rows = [rules.HotReading(b, t, temp, "reading", pk)
            for b, t, temp, pk in current.filter(temp_c__gt=above_c).values_list("battery_id", "taken_at", "temp_c", "pk")]
    cells = CellReading.objects.filter(
        inspection__is_current=True, inspection__deleted_at__isnull=True, inspection__battery_id__in=battery_ids,
        inspection__taken_at__gte=since, inspection__taken_at__lte=now, temp_c__gt=above_c,
    ).values_list("inspection__battery_id", "inspection__taken_at", "temp_c", "position", "inspection_id")
    rows += [rules.HotReading(b, t, temp, f"cell {position}", pk) for b, t, temp, position, pk in cells]
    for loader in TEMPERATURE_SOURCES:
        rows += loader(battery_ids, since, now, above_c)
    return rows


def redetect(battery_id):
    """Run detection for one battery once the current transaction commits (a reading elsewhere changed it)."""
    transaction.on_commit(lambda: _detect_one(battery_id))


def _evidence(detected):
    return detected.evidence()


def _digest(values):
    """A finding's stored content as one string: equal exactly when the content stored as JSON is equal."""
    text = json.dumps(values, sort_keys=True, cls=DjangoJSONEncoder, separators=(",", ":"))
    return hashlib.sha256(text.encode()).hexdigest()


def _store(found, batteries, now):
    """Open new findings, refresh those still shown, clear those no longer shown. A finding is rewritten only
    when its content changed (by its digest: a finding from before the digest is rewritten once)."""
    existing = {(battery, kind): (pk, digest) for pk, battery, kind, digest in
                Finding.objects.active().filter(battery_id__in=_battery_ids(batteries))
                .values_list("pk", "battery_id", "kind", "content_digest")}
    to_create, to_update, seen = [], [], []
    for battery, detections in found:
        for d in detections:
            values = {
                "severity": d.severity, "positions": list(d.positions), "persistent": d.persistent,
                "evidence": _evidence(d), "summary": d.summary,
                "inspection_id": d.inspection.pk if d.inspection is not None else None,
            }
            digest = _digest(values)
            pk, before = existing.pop((battery.pk, d.kind), (None, None))
            if pk is None:
                to_create.append(Finding(battery=battery, kind=d.kind, state=Finding.State.OPEN,
                                         opened_at=now, last_seen_at=now, content_digest=digest, **values))
                continue
            seen.append(pk)
            if digest != before:
                to_update.append(Finding(pk=pk, content_digest=digest, **values))
    gone = [pk for pk, _ in existing.values()]
    with transaction.atomic():
        if to_create:
            Finding.objects.bulk_create(to_create)
        if to_update:
            Finding.objects.bulk_update(to_update, UPDATED_FIELDS)
        if seen:
            Finding.objects.filter(pk__in=seen).update(last_seen_at=now)
        if gone:
            Finding.objects.filter(pk__in=gone).update(state=Finding.State.CLEARED, cleared_at=now)
    return len(to_create), len(gone)


def detect_for_batteries(batteries, now=None, answer=True):
    """Run every rule on the batteries (a queryset) and store the result; returns their active findings
    (or None with answer=False, for callers on save and import that only need them stored)."""
    now = now or timezone.now()
    found = [(d.battery, rules.detect(d)) for d in load(batteries, now)]
    _store(found, batteries, now)
    if not answer:
        return None
    return list(
        Finding.objects.active().filter(battery_id__in=_battery_ids(batteries))
        .select_related("battery", "battery__site").order_by("battery__serial", "kind")
    )


def detect_fleet(now=None, site=None, answer=True):
    """The whole fleet (or one site) on demand; returns its active findings (None with answer=False)."""
    batteries = Battery.objects.all()
    if site is not None:
        batteries = batteries.filter(site=site)
    return detect_for_batteries(batteries, now=now, answer=answer)


# --- Detection on save ---------------------------------------------------------------------------


def _detect_one(battery_id):
    try:
        detect_for_batteries(Battery.objects.filter(pk=battery_id), answer=False)
    except Exception:  # a reading is already committed; a detection fault must not turn its save into an error
        log.exception("findings detection failed for battery %s", battery_id)


def on_inspection_recorded(sender, inspection, **kwargs):
    _detect_one(inspection.battery_id)


def on_top_up_recorded(sender, top_up, **kwargs):
    _detect_one(top_up.battery_id)


def on_reading_change(sender, instance, created, **kwargs):
    """A removed inspection or top-up no longer counts: check that battery again once the removal commits."""
    if created and instance.action == "removed":
        battery_id = instance.battery_id
        transaction.on_commit(lambda: _detect_one(battery_id))

"""Each battery's current state (BatteryState), kept in step with its history by the writes in services.py and
csv_io.py, in their own transaction, so pages read one row per battery instead of the battery's whole history.

It also keeps each battery's totals per calendar month on its site's clock (BatteryMonth: water added, and the
states of charge read before charging), added to in the same way and recomputed with the row.

A new reading or top-up is folded into the row (`absorb_inspection`, `absorb_top_up`; a CSV import's readings
through a `Folding`, written once at its end): constant work whatever the history. A correction or a removal recomputes the rows it
touched from history (`refresh`), and
`manage.py rebuild_battery_state` recomputes every row. The battery rows are locked first (FOR NO KEY UPDATE,
which does not block readings being stored for them), so two writers of one battery's state take turns and
the second computes from what the first committed.
"""
import zoneinfo
from collections import defaultdict
from dataclasses import dataclass
from decimal import Decimal
from functools import cached_property
from types import SimpleNamespace

from django.db import transaction
from django.db.models import Count, IntegerField, Max, Min, OuterRef, Q, Subquery, Sum
from django.db.models.functions import Coalesce, TruncMonth

from fleetcare.fleet.models import Battery, Site
from fleetcare.readings.models import BatteryMonth, BatteryState, Inspection, WaterTopUp

CHUNK = 400  # batteries per rebuild query (SQLite allows 999 parameters in one statement)


@dataclass(frozen=True)
class Latest:
    """One 'latest reading of a kind' the row keeps: its inspection (`<name>_inspection`), time (`<name>_at`)
    and some of its values copied (inspection field -> state field). `where` and `matches` say the same rule,
    once for SQL and once for a reading in hand; tests/readings/test_battery_state.py holds them together."""

    name: str
    where: Q
    matches: object
    copies: tuple = ()

    @cached_property
    def at_field(self):
        return f"{self.name}_at"

    @cached_property
    def id_field(self):
        return f"{self.name}_inspection_id"


SHOWS_SOC = set(Inspection.SHOWS_STATE_OF_CHARGE)
POST_CHARGE = set(Inspection.POST_CHARGE)
ALL_CELLS = Inspection.Scope.ALL_CELLS

KINDS = (
    Latest("latest", Q(), lambda i: True, (("situation", "latest_situation"),)),
    Latest("all_cells", Q(scope=ALL_CELLS), lambda i: i.scope == ALL_CELLS),
    Latest("soc", Q(situation__in=SHOWS_SOC, soc_percent__isnull=False),
           lambda i: i.situation in SHOWS_SOC and i.soc_percent is not None, (("soc_percent", "soc_percent"),)),
    Latest("spread", Q(scope=ALL_CELLS, sg_spread__isnull=False),
           lambda i: i.scope == ALL_CELLS and i.sg_spread is not None, (("sg_spread", "sg_spread"),)),
    Latest("post_charge_spread", Q(situation__in=POST_CHARGE, scope=ALL_CELLS, sg_spread__isnull=False),
           lambda i: i.situation in POST_CHARGE and i.scope == ALL_CELLS and i.sg_spread is not None,
           (("sg_spread", "post_charge_sg_spread"), ("sg_behind_median", "post_charge_sg_behind_median"))),
    Latest("equalized", Q(situation=Inspection.Situation.JUST_EQUALIZED),
           lambda i: i.situation == Inspection.Situation.JUST_EQUALIZED),
    Latest("post_charge", Q(situation__in=POST_CHARGE), lambda i: i.situation in POST_CHARGE),
)
COUNTS = {"charge_count": Q(situation__in=POST_CHARGE)}

STATE_FIELDS = [f.attname for f in BatteryState._meta.concrete_fields if not f.primary_key]
EMPTY = {f.attname: f.get_default() for f in BatteryState._meta.concrete_fields if not f.primary_key}


def lock(battery_ids):
    """Take the battery rows' lock that every writer of their state takes first (no-op on SQLite, whose
    writers already take turns)."""
    ids = sorted(set(battery_ids))
    list(Battery.objects.select_for_update(no_key=True).filter(pk__in=ids).order_by("pk").values_list("pk", flat=True))


def computed(battery_ids):
    """{battery id: {state field: value}} recomputed from history (every battery named gets a row)."""
    out = {}
    ids = sorted(set(battery_ids))
    for start in range(0, len(ids), CHUNK):
        out.update(_computed(ids[start:start + CHUNK]))
    return out


def _computed(ids):
    current = Inspection.objects.current().filter(battery=OuterRef("pk")).order_by("-taken_at", "-pk")
    annotations = {f"{k.name}_inspection_id": Subquery(current.filter(k.where).values("pk")[:1]) for k in KINDS}
    for name, where in COUNTS.items():
        counted = (Inspection.objects.current().filter(where, battery=OuterRef("pk")).order_by()
                   .values("battery").annotate(n=Count("pk")).values("n"))
        annotations[name] = Coalesce(Subquery(counted, output_field=IntegerField()), 0)
    annotations["first_post_charge_at"] = Subquery(
        Inspection.objects.current().filter(situation__in=POST_CHARGE, battery=OuterRef("pk")).order_by()
        .values("battery").annotate(first=Min("taken_at")).values("first")
    )
    annotations["watered_at"] = Subquery(
        WaterTopUp.objects.current().filter(battery=OuterRef("pk")).order_by().values("battery")
        .annotate(last=Max("done_at")).values("last")
    )
    rows = list(Battery.objects.filter(pk__in=ids).annotate(**annotations).values("pk", *annotations))
    wanted = {row[f"{k.name}_inspection_id"] for row in rows for k in KINDS} - {None}
    copied = {"taken_at"} | {source for k in KINDS for source, _ in k.copies}
    inspections = {r["pk"]: r for r in Inspection.objects.filter(pk__in=wanted).values("pk", *copied)}
    out = {}
    for row in rows:
        values = {name: row[name] for name in (*COUNTS, "first_post_charge_at", "watered_at")}
        for kind in KINDS:
            found = inspections.get(row[f"{kind.name}_inspection_id"])
            values[f"{kind.name}_inspection_id"] = found["pk"] if found else None
            values[f"{kind.name}_at"] = found["taken_at"] if found else None
            for source, target in kind.copies:
                values[target] = found[source] if found else EMPTY[target]
        out[row["pk"]] = values
    return out


def refresh(battery_ids):
    """Recompute these batteries' rows from history and store them (inside the caller's transaction)."""
    ids = sorted(set(battery_ids))
    if not ids:
        return
    lock(ids)
    rows = computed(ids)
    BatteryState.objects.bulk_create(
        [BatteryState(battery_id=pk, **values) for pk, values in rows.items()],
        batch_size=CHUNK, update_conflicts=True, unique_fields=["battery"], update_fields=STATE_FIELDS,
    )
    refresh_months(ids)


def rebuild(battery_ids=None):
    """Recompute every battery's row (or these batteries'); returns how many rows were written."""
    ids = list(Battery.objects.values_list("pk", flat=True)) if battery_ids is None else list(battery_ids)
    for start in range(0, len(ids), CHUNK):
        refresh(ids[start:start + CHUNK])
    return len(ids)


def absorb_inspection(inspection):
    """Fold a newly stored, current inspection into its battery's row."""
    lock([inspection.battery_id])
    state = BatteryState.objects.filter(battery_id=inspection.battery_id).first()
    if state is None:
        refresh([inspection.battery_id])
        return
    changed = _fold(state, inspection)
    if changed:
        state.save(update_fields=sorted(changed))
    Months(inspections=[inspection]).write()


def absorb_inspections(inspections):
    """Fold newly stored, current inspections of any batteries into their rows, at once."""
    folding = Folding()
    folding.add(inspections)
    folding.write()


class Folding:
    """The kept state of a bulk write (a CSV import): each chunk's inspections are folded into a summary per
    battery in memory (`add`: no query, memory bounded by the batteries, not the rows), and `write` locks the
    batteries once at the end, reads their rows and merges the summaries in: the work does not grow with the
    batteries' history, and the battery rows are locked only for the last moments of the import, not while it
    reads the file. A battery without a row yet gets one computed from history, which holds the new rows."""

    def __init__(self):
        self.deltas = {}
        self.months = Months()

    def add(self, inspections):
        for inspection in inspections:
            delta = self.deltas.get(inspection.battery_id)
            if delta is None:  # the fields of a BatteryState as plain attributes: a model's cost more to set
                delta = self.deltas[inspection.battery_id] = SimpleNamespace(battery_id=inspection.battery_id, **EMPTY)
            _fold(delta, inspection)
        self.months.add_inspections(inspections)

    def write(self):
        ids = sorted(self.deltas)
        if not ids:
            return
        lock(ids)
        states = {state.battery_id: state for state in BatteryState.objects.filter(battery_id__in=ids)}
        for battery_id, state in states.items():
            changed = _merge(state, self.deltas[battery_id])
            if changed:
                state.save(update_fields=sorted(changed))
        self.months.write(only=states)  # a battery without a row gets its months with it, from history
        refresh([pk for pk in ids if pk not in states])
        self.deltas, self.months = {}, Months()


def _merge(state, delta):
    """Fold a summary of new inspections (a BatteryState of only them) into a battery's row; returns the fields
    changed."""
    changed = set()
    for kind in KINDS:
        at = getattr(delta, kind.at_field)
        if at is not None:
            changed |= _offer(state, kind, at, getattr(delta, kind.id_field),
                              {target: getattr(delta, target) for _source, target in kind.copies})
    return changed | _add_charges(state, delta.charge_count, delta.first_post_charge_at)


def _fold(state, inspection):
    """Fold one inspection into a battery's row in hand; returns the names of the fields it changed."""
    changed = set()
    for kind in KINDS:
        if kind.matches(inspection):
            changed |= _offer(state, kind, inspection.taken_at, inspection.pk,
                              {target: getattr(inspection, source) for source, target in kind.copies})
    if inspection.situation in POST_CHARGE:
        changed |= _add_charges(state, 1, inspection.taken_at)
    return changed


def _offer(state, kind, at, pk, copied):
    """The row's latest reading of `kind` becomes this one (taken `at`, id `pk`, `copied` {state field: value}) if
    it is later: by time, ties to the later stored. Returns the fields changed."""
    now_at, now_pk = getattr(state, kind.at_field), getattr(state, kind.id_field)
    if now_at is not None and (at, pk) <= (now_at, now_pk or 0):
        return set()
    setattr(state, kind.id_field, pk)
    setattr(state, kind.at_field, at)
    for target, value in copied.items():
        setattr(state, target, value)
    return {f"{kind.name}_inspection", kind.at_field, *copied}


def _add_charges(state, count, first_at):
    """`count` more charges logged, the earliest at `first_at`: the count adds up, the earliest stays."""
    if not count:
        return set()
    state.charge_count += count
    changed = {"charge_count"}
    if first_at is not None and (state.first_post_charge_at is None or first_at < state.first_post_charge_at):
        state.first_post_charge_at = first_at
        changed.add("first_post_charge_at")
    return changed


def absorb_top_up(top_up):
    """Fold a newly stored top-up into its battery's row."""
    lock([top_up.battery_id])
    state = BatteryState.objects.filter(battery_id=top_up.battery_id).first()
    if state is None:
        refresh([top_up.battery_id])
        return
    if state.watered_at is None or top_up.done_at > state.watered_at:
        state.watered_at = top_up.done_at
        state.save(update_fields=["watered_at"])
    Months(top_up=top_up).write()


def stored(battery_ids):
    """{battery id: {state field: value}} as stored (batteries without a row are left out)."""
    return {
        row.pop("battery_id"): row
        for row in BatteryState.objects.filter(battery_id__in=list(battery_ids)).values("battery_id", *STATE_FIELDS)
    }


def differences(battery_ids=None):
    """{battery id: {field names}} where the stored state is not what the history gives (a battery without a row
    reads as one with nothing recorded)."""
    ids = list(Battery.objects.values_list("pk", flat=True)) if battery_ids is None else list(battery_ids)
    out = {}
    for start in range(0, len(ids), CHUNK):
        part = ids[start:start + CHUNK]
        have, want = stored(part), computed(part)
        have_months, want_months = stored_months(part), computed_months(part)
        for pk, values in want.items():
            row = have.get(pk, EMPTY)
            fields = {name for name, value in values.items() if row[name] != value}
            if have_months.get(pk, {}) != want_months.get(pk, {}):
                fields.add("months")
            if fields:
                out[pk] = fields
    return out


# --- Monthly totals ------------------------------------------------------------------------------

MONTH_FIELDS = ("water_ml", "top_ups", "before_charge_socs", "before_charge_soc_total")
BEFORE_CHARGE = Inspection.Situation.BEFORE_CHARGE
# What the months count, said once for SQL and once for a reading in hand (every reading folded in is current).
COUNTS_FOR_DEPTH = Q(situation=BEFORE_CHARGE, soc_percent__isnull=False)


def counts_for_depth(inspection):
    return inspection.situation == BEFORE_CHARGE and inspection.soc_percent is not None


def month_of(moment, zone):
    """The first day of the month `moment` falls in, on the clock of `zone`."""
    return moment.astimezone(zone).date().replace(day=1)


def site_zones(battery_ids):
    """{battery id: its site's zone}: one query."""
    return {pk: zoneinfo.ZoneInfo(name)
            for pk, name in Battery.objects.filter(pk__in=list(battery_ids)).values_list("pk", "site__timezone")}


class Months:
    """Additions to batteries' monthly totals, summed in memory and written at once (`write`, inside the
    caller's transaction, after the batteries were locked)."""

    def __init__(self, inspections=(), top_up=None):
        self.totals = defaultdict(lambda: [Decimal(0), 0, 0, Decimal(0)])  # (battery id, month) -> MONTH_FIELDS
        self.zones = {}
        self.add_inspections(inspections)
        if top_up is not None:
            self.add_top_up(top_up)

    def _zone(self, battery_ids):
        unknown = set(battery_ids) - set(self.zones)
        if unknown:
            self.zones.update(site_zones(unknown))
        return self.zones

    def add_inspections(self, inspections):
        counted = [i for i in inspections if counts_for_depth(i)]
        zones = self._zone({i.battery_id for i in counted})
        for inspection in counted:
            total = self.totals[inspection.battery_id, month_of(inspection.taken_at, zones[inspection.battery_id])]
            total[2] += 1
            total[3] += inspection.soc_percent

    def add_top_up(self, top_up):
        total = self.totals[top_up.battery_id, month_of(top_up.done_at, self._zone([top_up.battery_id])[top_up.battery_id])]
        total[0] += top_up.volume_ml
        total[1] += 1

    def write(self, only=None):
        """Add the sums to the stored rows (only those of the batteries in `only`, if given)."""
        wanted = {key: values for key, values in self.totals.items() if only is None or key[0] in only}
        if not wanted:
            return
        rows = {(row.battery_id, row.month): row for row in BatteryMonth.objects.filter(
            battery_id__in={pk for pk, _month in wanted}, month__in={month for _pk, month in wanted})}
        changed, new = [], []
        for (battery_id, month), values in wanted.items():
            row = rows.get((battery_id, month))
            if row is None:
                new.append(_month_row(battery_id, month, values))
                continue
            for name, value in zip(MONTH_FIELDS, values, strict=True):
                setattr(row, name, getattr(row, name) + value)
            changed.append(row)
        BatteryMonth.objects.bulk_create(new, batch_size=CHUNK)
        BatteryMonth.objects.bulk_update(changed, MONTH_FIELDS, batch_size=CHUNK)


def _month_row(battery_id, month, values):
    """A BatteryMonth from its totals in MONTH_FIELDS order."""
    return BatteryMonth(battery_id=battery_id, month=month, **dict(zip(MONTH_FIELDS, values, strict=True)))


def computed_months(battery_ids):
    """{battery id: {month: (water_ml, top_ups, before_charge_socs, before_charge_soc_total)}} from history
    (batteries with nothing to count are left out). Two queries for each site clock among the batteries."""
    by_zone = defaultdict(list)
    for pk, zone in site_zones(battery_ids).items():
        by_zone[zone].append(pk)
    out = defaultdict(lambda: defaultdict(lambda: [Decimal(0), 0, 0, Decimal(0)]))
    for zone, ids in by_zone.items():
        water = (WaterTopUp.objects.current().filter(battery_id__in=ids)
                 .annotate(m=TruncMonth("done_at", tzinfo=zone)).order_by()
                 .values("battery_id", "m").annotate(ml=Sum("volume_ml"), n=Count("pk")))
        for row in water:
            total = out[row["battery_id"]][row["m"].date()]
            total[0], total[1] = row["ml"], row["n"]
        socs = (Inspection.objects.current().filter(COUNTS_FOR_DEPTH, battery_id__in=ids)
                .annotate(m=TruncMonth("taken_at", tzinfo=zone)).order_by()
                .values("battery_id", "m").annotate(n=Count("pk"), soc=Sum("soc_percent")))
        for row in socs:
            total = out[row["battery_id"]][row["m"].date()]
            total[2], total[3] = row["n"], row["soc"]
    return {pk: {month: tuple(values) for month, values in months.items()} for pk, months in out.items()}


def stored_months(battery_ids):
    """The same as computed_months, as stored."""
    out = defaultdict(dict)
    for row in BatteryMonth.objects.filter(battery_id__in=list(battery_ids)).values("battery_id", "month", *MONTH_FIELDS):
        out[row["battery_id"]][row["month"]] = tuple(row[name] for name in MONTH_FIELDS)
    return dict(out)


def refresh_months(battery_ids):
    """Recompute these batteries' monthly totals from history and store them (inside the caller's transaction,
    the batteries locked)."""
    ids = sorted(set(battery_ids))
    months = computed_months(ids)
    BatteryMonth.objects.filter(battery_id__in=ids).delete()
    BatteryMonth.objects.bulk_create(
        [_month_row(pk, month, values)
         for pk, by_month in months.items() for month, values in by_month.items()],
        batch_size=CHUNK,
    )


def remember_zone(sender, instance, **kwargs):
    """Before a battery or a site is saved: the site clock its months are kept on now."""
    instance._months_zone = None
    if instance.pk is not None and not instance._state.adding:
        if isinstance(instance, Site):
            instance._months_zone = Site.objects.filter(pk=instance.pk).values_list("timezone", flat=True).first()
        else:
            instance._months_zone = (Battery.objects.filter(pk=instance.pk)
                                     .values_list("site__timezone", flat=True).first())


def follow_zone(sender, instance, created=False, **kwargs):
    """After a battery moved to a site on another clock, or a site's clock changed: its batteries' months are
    counted again on the new clock."""
    before = getattr(instance, "_months_zone", None)
    if created or before is None:
        return
    if isinstance(instance, Site):
        if before == instance.timezone:
            return
        ids = list(Battery.objects.filter(site=instance).values_list("pk", flat=True))
    else:
        if before == Site.objects.filter(pk=instance.site_id).values_list("timezone", flat=True).first():
            return
        ids = [instance.pk]
    with transaction.atomic():
        lock(ids)
        refresh_months(ids)

"""Writes that store a whole inspection or top-up at once, computing its figures with fleetcare.chemistry."""
from dataclasses import dataclass, replace
from decimal import ROUND_HALF_UP, Decimal

from django.db import IntegrityError, transaction
from django.utils import timezone

from fleetcare import chemistry
from fleetcare.readings.models import ReadingChange
from fleetcare.readings import signals, state
from fleetcare.readings.models import CellReading, Inspection, WaterTopUp

SG_PLACES = Decimal("0.001")
BEHIND_PLACES = Decimal("0.0001")
SOC_PLACES = Decimal("0.1")


@dataclass(frozen=True)
class CellEntry:
    position: int
    sg: Decimal | None = None
    volts: Decimal | None = None
    level: str = ""
    temp_c: Decimal | None = None


def _q(value, places):
    return None if value is None else Decimal(str(value)).quantize(places, rounding=ROUND_HALF_UP)


def _float(value):
    return None if value is None else float(value)


def corrected_cell_sg(profile, sg, temp_c, compensated):
    """The SG a cell would read at the profile's reference temperature."""
    if sg is None:
        return None
    if compensated or temp_c is None:
        return float(sg)
    return chemistry.corrected_sg(
        float(sg), float(temp_c),
        reference_temp_c=float(profile.sg_reference_temp_c),
        coefficient_per_c=float(profile.sg_coefficient_per_c),
    )


def is_rested(inspection, profile):
    """Open-circuit voltage means something only after the battery rested off charge and load."""
    if inspection.situation == Inspection.Situation.IN_USE:
        return False
    if inspection.hours_since_charge is not None:
        return inspection.hours_since_charge >= profile.ocv_rest_hours
    return inspection.situation == Inspection.Situation.RESTED


def summarise(inspection, cells):
    """Fill the inspection's summary fields from its cells (not saved here)."""
    return summarise_values(inspection, [(c.position, float(c.sg_corrected)) for c in cells if c.sg_corrected is not None],
                            [c.volts for c in cells if c.volts is not None])


def summarise_values(inspection, corrected, volts):
    """summarise() from the cells' (position, corrected SG as a float) pairs and their volts, in position order, for
    a caller that has the floats already (the CSV import converts each distinct value once)."""
    profile = inspection.battery.profile
    inspection.sg_mean = inspection.sg_min = inspection.sg_max = inspection.sg_spread = None
    inspection.sg_behind_median = None
    inspection.lowest_position = inspection.volts_total = inspection.soc_percent = None
    inspection.soc_basis = ""
    if corrected:
        positions, sgs = zip(*corrected)
        stats = chemistry.sg_stats(sgs)
        inspection.sg_mean = _q(stats.mean, SG_PLACES)
        inspection.sg_min = _q(stats.lowest, SG_PLACES)
        inspection.sg_max = _q(stats.highest, SG_PLACES)
        inspection.sg_spread = _q(stats.spread, SG_PLACES)
        inspection.lowest_position = positions[stats.lowest_index]
        if inspection.scope == Inspection.Scope.ALL_CELLS:
            behind = chemistry.furthest_below_median_of_others_sg(dict(corrected))
            inspection.sg_behind_median = _q(behind, BEHIND_PLACES)  # a median of two cells ends in 0.0005
        if profile.full_charge_sg is not None and profile.discharged_sg is not None:
            inspection.soc_percent = _q(
                chemistry.soc_from_sg(stats.mean, float(profile.full_charge_sg), float(profile.discharged_sg)), SOC_PLACES
            )
            inspection.soc_basis = "sg"
    if volts and len(volts) == (profile.positions if inspection.scope == Inspection.Scope.ALL_CELLS else 1):
        inspection.volts_total = _q(sum(volts), Decimal("0.01"))
        if inspection.soc_percent is None and is_rested(inspection, profile):
            cells_read = profile.cells_per_block * len(volts) if profile.reads_by_block else len(volts)
            inspection.soc_percent = _q(chemistry.soc_from_ocv(
                float(inspection.volts_total), cells_read, profile.technology,
                full_charge_sg=_float(profile.full_charge_sg), discharged_sg=_float(profile.discharged_sg),
            ), SOC_PLACES)
            inspection.soc_basis = "ocv"
    return inspection


def build_cells(inspection, entries):
    profile = inspection.battery.profile
    cells = []
    for entry in entries:
        temp = entry.temp_c if entry.temp_c is not None else inspection.temp_c
        cells.append(
            CellReading(
                inspection=inspection,
                position=entry.position,
                sg=entry.sg,
                sg_corrected=_q(corrected_cell_sg(profile, entry.sg, temp, inspection.hydrometer_compensated), SG_PLACES),
                temp_c=entry.temp_c,
                volts=entry.volts,
                level=entry.level,
            )
        )
    return cells


def record_inspection(*, battery, user, taken_at, situation, cells, scope=Inspection.Scope.ALL_CELLS,
                      temp_c=None, hydrometer_compensated=False, hours_since_charge=None, notes="",
                      client_uuid=None, supersedes=None, revision_reason="", chosen_via=Inspection.ChosenVia.UNKNOWN,
                      client_digest=""):
    """Store one inspection and all its cell readings, or nothing. Returns (inspection, created).

    A client UUID seen before returns the stored inspection untouched, so a tablet may resend freely.
    """
    existing = _already_stored(Inspection, client_uuid)
    if existing is not None:
        return existing, False
    inspection = Inspection(
        battery=battery, taken_by=user, taken_at=taken_at, situation=situation, scope=scope,
        temp_c=temp_c, hydrometer_compensated=hydrometer_compensated, hours_since_charge=hours_since_charge,
        notes=notes, supersedes=supersedes, revision_reason=revision_reason, chosen_via=chosen_via,
        client_digest=client_digest,
    )
    if client_uuid is not None:
        inspection.client_uuid = client_uuid
    rows = build_cells(inspection, cells)
    summarise(inspection, rows)

    def write():
        if supersedes is not None:
            _retire(supersedes)
        inspection.save()
        for row in rows:
            row.inspection = inspection
        CellReading.objects.bulk_create(rows)
        if supersedes is not None:
            state.refresh([inspection.battery_id])
        else:
            state.absorb_inspection(inspection)
        transaction.on_commit(lambda: signals.inspection_recorded.send(Inspection, inspection=inspection))

    return _store_once(inspection, write)


def _already_stored(model, client_uuid):
    if client_uuid is None:
        return None
    return model.objects.filter(client_uuid=client_uuid).first()


def _store_once(record, write):
    """Run write() atomically; if a resend with the same client UUID won the race, answer with that one.

    Returns (record, created) like get_or_create."""
    try:
        with transaction.atomic():
            write()
    except IntegrityError:
        existing = _already_stored(type(record), record.client_uuid)
        if existing is None:
            raise
        return existing, False
    return record, True


class RevisionError(Exception):
    """A correction or removal that would change history: only the current, undeleted version may be changed."""


def _retire(inspection):
    """Mark the revision being corrected as no longer current, or refuse if it already is not.

    One conditional UPDATE: of two corrections racing for the same revision, the second finds no
    current row (PostgreSQL re-checks the condition after the first commits) and is refused.
    """
    retired = Inspection.objects.filter(pk=inspection.pk, is_current=True, deleted_at__isnull=True).update(is_current=False)
    if retired != 1:
        raise RevisionError(refusal(inspection))
    inspection.is_current = False


def refusal(inspection):
    """Why this revision cannot be corrected or removed, or "" if it can."""
    if inspection.deleted_at is not None:
        return "This reading was removed; a removed reading cannot be corrected or removed again."
    if not inspection.is_current or Inspection.objects.filter(supersedes=inspection).exists():
        return "This version was already corrected. Open the current version and correct that one instead."
    return ""


def correct_inspection(old, *, user, reason, cells, temp_c=None, client_uuid=None, **fields):
    """Store a corrected copy of `old` as a new revision (old stays, no longer current). Returns (new, created).

    The reading keeps the person who took it; the corrector and the reason go in the audit trail.
    Per-cell temperatures (from a CSV import) carry over when the inspection temperature is unchanged.
    """
    if not reason or not reason.strip():
        raise RevisionError("A correction needs a reason.")
    if temp_c == old.temp_c:
        old_temps = {c.position: c.temp_c for c in old.cells.all() if c.temp_c is not None}
        cells = [replace(c, temp_c=old_temps.get(c.position, c.temp_c)) for c in cells]
    with transaction.atomic():
        new, created = record_inspection(
            battery=old.battery, user=old.taken_by, cells=cells, temp_c=temp_c, client_uuid=client_uuid,
            supersedes=old, revision_reason=reason.strip(), chosen_via=old.chosen_via, **fields,
        )
        if created:
            ReadingChange.objects.create(
                battery=old.battery, action=ReadingChange.Action.CORRECTED, inspection=old, new_revision=new,
                changed_by=user, reason=reason.strip(),
            )
    return new, created


def remove_inspection(inspection, *, user, reason):
    """Soft delete: the row stays, marked with who and when, and no longer counts anywhere."""
    if not reason or not reason.strip():
        raise RevisionError("A removal needs a reason.")
    now = timezone.now()
    with transaction.atomic():
        removed = Inspection.objects.filter(pk=inspection.pk, is_current=True, deleted_at__isnull=True).update(
            deleted_at=now, deleted_by=user
        )
        if removed != 1:
            raise RevisionError(refusal(inspection) or "This reading cannot be removed.")
        ReadingChange.objects.create(
            battery_id=inspection.battery_id, action=ReadingChange.Action.REMOVED, inspection=inspection,
            changed_by=user, reason=reason.strip(),
        )
        state.refresh([inspection.battery_id])
    inspection.deleted_at, inspection.deleted_by = now, user
    return inspection


def remove_top_up(top_up, *, user, reason):
    """Soft delete of a water top-up: the row stays; who and why are in the audit trail."""
    if not reason or not reason.strip():
        raise RevisionError("A removal needs a reason.")
    now = timezone.now()
    with transaction.atomic():
        if WaterTopUp.objects.filter(pk=top_up.pk, deleted_at__isnull=True).update(deleted_at=now) != 1:
            raise RevisionError("This top-up was already removed.")
        ReadingChange.objects.create(
            battery_id=top_up.battery_id, action=ReadingChange.Action.REMOVED, top_up=top_up,
            changed_by=user, reason=reason.strip(),
        )
        state.refresh([top_up.battery_id])
    top_up.deleted_at = now
    return top_up


def record_top_up(*, battery, user, done_at, volume_ml, volume_entered="", before_charge=False,
                  water_type=WaterTopUp.WaterType.DISTILLED, notes="", client_uuid=None, client_digest=""):
    """Store one water top-up. Returns (top_up, created); a repeated client UUID stores nothing new."""
    existing = _already_stored(WaterTopUp, client_uuid)
    if existing is not None:
        return existing, False
    top_up = WaterTopUp(
        battery=battery, done_by=user, done_at=done_at, volume_ml=volume_ml, volume_entered=volume_entered,
        before_charge=before_charge, water_type=water_type, notes=notes, client_digest=client_digest,
    )
    if client_uuid is not None:
        top_up.client_uuid = client_uuid

    def write():
        top_up.save()
        state.absorb_top_up(top_up)
        transaction.on_commit(lambda: signals.top_up_recorded.send(WaterTopUp, top_up=top_up))

    return _store_once(top_up, write)


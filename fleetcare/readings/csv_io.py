"""CSV in and out, one row per cell reading.

Rows with the same serial, taken_at and situation form one inspection. Importing the same file
twice stores it once: each inspection's client UUID is derived from those three values.
"""
import csv
import datetime as dt
import io
import uuid
from collections import defaultdict, namedtuple
from dataclasses import dataclass, field
from decimal import Decimal, InvalidOperation

from django.db import connection, transaction
from django.utils import timezone
from django.utils.dateparse import parse_datetime

from fleetcare import chemistry
from fleetcare.readings import signals
from fleetcare.readings.forms import SG_HIGH, SG_LOW, TEMP_HIGH_C, TEMP_LOW_C
from fleetcare.readings.models import CellReading, Inspection
from fleetcare.readings.services import SG_PLACES, CellEntry, _q, corrected_cell_sg, summarise

COLUMNS = ["serial", "taken_at", "situation", "cell", "sg", "temp", "volts", "level"]
EXPORT_COLUMNS = COLUMNS + ["sg_corrected", "inspection_soc_percent"]
IMPORT_NAMESPACE = uuid.UUID("6f1c1d2e-5b7a-4c1e-9d55-0c3f2a8e7b10")
SITUATIONS = {value: value for value in Inspection.Situation.values} | {
    label.lower(): value for value, label in Inspection.Situation.choices
}


@dataclass
class ImportReport:
    rows_read: int = 0
    errors: list = field(default_factory=list)  # (line, message)
    inspections_created: int = 0
    inspections_already_stored: int = 0
    cells_created: int = 0
    imported: bool = False
    dry_run: bool = False

    @property
    def ok(self):
        return not self.errors


def _decimal(text, name, line, errors):
    try:
        value = Decimal(text)
    except InvalidOperation:
        value = None
    if value is None or not value.is_finite():
        errors.append((line, f"{name} “{text}” is not a number."))
        return None
    return value


class _Memo:
    """What a file repeats row after row, worked out once per import: battery facts, times, SG and temperatures."""

    def __init__(self, batteries):
        self.batteries = batteries
        self.latest_allowed = timezone.now() + dt.timedelta(hours=1)
        self.facts = {}
        self.times = {}
        self.sgs = {}
        self.decimals = {}

    def battery_facts(self, battery):
        facts = self.facts.get(battery.pk)
        if facts is None:
            profile = battery.profile
            cells = profile.cells_per_block if profile.reads_by_block else 1
            low, high = chemistry.plausible_volts_range(cells, profile.technology)
            facts = self.facts[battery.pk] = (profile.positions, profile.is_flooded, cells, low, high,
                                              Decimal(str(low)), Decimal(str(high)))
        return facts

    def taken_at(self, text, battery):
        key = (text, battery.site_id if battery else None)
        if key not in self.times:
            try:
                taken_at = parse_datetime(text)
            except ValueError:
                taken_at = None
            if taken_at is not None and timezone.is_naive(taken_at):
                taken_at = timezone.make_aware(taken_at, battery.site.tzinfo if battery else dt.timezone.utc)
            self.times[key] = taken_at
        return self.times[key]

    def sg(self, text):
        """(SG to 0.001, None) or (None, the parser's message)."""
        if text not in self.sgs:
            try:
                self.sgs[text] = (Decimal(str(chemistry.parse_sg(text))).quantize(Decimal("0.001")), None)
            except ValueError as exc:
                self.sgs[text] = (None, str(exc))
        return self.sgs[text]

    def decimal(self, text, name, line, errors):
        value = self.decimals.get(text)
        if value is None:
            value = _decimal(text, name, line, errors)
            if value is not None:
                self.decimals[text] = value
        return value


def _parse_row(line, row, memo, errors):
    """Validate one row; return (group key, battery, CellEntry) or None."""
    before = len(errors)
    serial = (row.get("serial") or "").strip()
    battery = memo.batteries.get(serial)
    if not serial:
        errors.append((line, "serial is empty."))
    elif battery is None:
        errors.append((line, f"no battery with serial “{serial}” at your sites."))
    facts = memo.battery_facts(battery) if battery is not None else None
    taken_text = (row.get("taken_at") or "").strip()
    taken_at = memo.taken_at(taken_text, battery)
    if taken_at is None:
        errors.append((line, f"taken_at “{taken_text}” is not a date and time like 2026-03-01T07:30."))
    elif taken_at > memo.latest_allowed:
        errors.append((line, f"taken_at {taken_text} is in the future."))
    situation = SITUATIONS.get((row.get("situation") or "").strip().lower())
    if situation is None:
        errors.append((line, f"situation “{row.get('situation', '')}” is not one of {', '.join(Inspection.Situation.values)}."))
    cell_text = (row.get("cell") or "").strip()
    position = int(cell_text) if cell_text.isdigit() else None
    if position is None:
        errors.append((line, f"cell “{cell_text}” is not a whole number."))
    elif facts is not None and not 1 <= position <= facts[0]:
        errors.append((line, f"cell {position} does not exist: {serial} has {facts[0]}."))
    sg = None
    sg_text = (row.get("sg") or "").strip()
    if sg_text:
        sg, problem = memo.sg(sg_text)
        if problem:
            errors.append((line, f"sg: {problem}"))
        elif not SG_LOW <= sg <= SG_HIGH:
            errors.append((line, f"sg {sg} is outside 1.000–1.350."))
        elif facts is not None and not facts[1]:
            errors.append((line, f"sg given for {serial}, a sealed battery: it cannot be read with a hydrometer."))
    temp = None
    temp_text = (row.get("temp") or "").strip()
    if temp_text:
        temp = memo.decimal(temp_text, "temp", line, errors)
        if temp is not None and not TEMP_LOW_C <= temp <= TEMP_HIGH_C:
            errors.append((line, f"temp {temp} °C is outside −30 to 70 °C."))
    volts = None
    volts_text = (row.get("volts") or "").strip()
    if volts_text:
        volts = memo.decimal(volts_text, "volts", line, errors)
        if volts is not None and facts is not None:
            _, _, cells, low, high, low_d, high_d = facts
            if not low_d <= volts <= high_d:
                errors.append((line, f"volts {volts} is not plausible for {cells} cell(s) ({low:.2f}–{high:.2f} V)."))
    if sg is None and volts is None and not errors[before:]:
        errors.append((line, "neither sg nor volts given."))
    if sg is not None and temp is None and not errors[before:]:
        errors.append((line, "sg given without temp (°C)."))
    level = (row.get("level") or "").strip().lower()
    if level not in ("", "ok", "low"):
        errors.append((line, f"level “{level}” must be ok, low or empty."))
    if len(errors) > before:
        return None
    entry = CellEntry(position=position, sg=sg, volts=volts, level=level, temp_c=temp)
    return (serial, taken_at, situation), battery, entry


def import_readings(text, *, user, batteries, good_rows_only=False, dry_run=False):
    """Validate every row, then store all inspections in one transaction (or nothing)."""
    report = ImportReport(dry_run=dry_run)
    reader = csv.DictReader(io.StringIO(text, newline=""))  # newline="": also old-Mac \r line endings
    try:
        rows = list(reader)
    except csv.Error as exc:
        report.errors.append((reader.line_num or 1, f"the file cannot be read as CSV ({exc}). Save it as CSV (UTF-8) and try again."))
        return report
    missing = [c for c in ("serial", "taken_at", "situation", "cell") if c not in (reader.fieldnames or [])]
    if missing:
        report.errors.append((1, f"missing column(s): {', '.join(missing)}. Expected: {', '.join(COLUMNS)}."))
        return report
    memo = _Memo({b.serial: b for b in batteries.select_related("profile", "site")})
    groups = defaultdict(list)  # the row's own (serial, taken_at, situation) text -> [(line, entry)]
    group_battery = {}  # same key -> ((serial, aware taken_at, situation), battery)
    bad_groups = set()
    for line, row in enumerate(rows, start=2):
        report.rows_read += 1
        raw_key = tuple((row.get(c) or "").strip() for c in ("serial", "taken_at", "situation"))
        parsed = _parse_row(line, row, memo, report.errors)
        if parsed is None:
            bad_groups.add(raw_key)
            continue
        key, battery, entry = parsed
        groups[raw_key].append((line, entry))
        group_battery[raw_key] = (key, battery)
    for raw_key, rows in groups.items():
        if raw_key in bad_groups:
            continue
        (serial, taken_at, _), battery = group_battery[raw_key]
        positions = [entry.position for _, entry in rows]
        first_line = rows[0][0]
        if len(set(positions)) != len(positions):
            report.errors.append((first_line, f"{serial} at {taken_at:%Y-%m-%d %H:%M}: a cell appears twice."))
            bad_groups.add(raw_key)
        elif len(rows) not in (1, battery.profile.positions):
            report.errors.append((
                first_line,
                f"{serial} at {taken_at:%Y-%m-%d %H:%M}: {len(rows)} cells read; the profile has "
                f"{battery.profile.positions} (give all of them, or one for a pilot-cell reading).",
            ))
            bad_groups.add(raw_key)
    report.errors.sort()
    if report.errors and not good_rows_only:
        return report
    good = {group_battery[raw][0]: rows for raw, rows in groups.items() if raw not in bad_groups}
    batteries_by_key = {group_battery[raw][0]: group_battery[raw][1] for raw in groups}
    if dry_run:
        report.inspections_created = len(good)
        report.cells_created = sum(len(rows) for rows in good.values())
        return report
    _store(good, batteries_by_key, user, report)
    return report


def _client_uuid(key):
    serial, taken_at, situation = key
    return uuid.uuid5(IMPORT_NAMESPACE, f"{serial}|{taken_at.isoformat()}|{situation}")


# A cell reading before it has an inspection to belong to: what summarise() reads and what is stored.
_Cell = namedtuple("_Cell", "position sg sg_corrected temp_c volts level")


def _cells(inspection, profile, entries, corrected_cache):
    """The cells of one inspection with their corrected SG, as services.build_cells computes them."""
    cells = []
    for entry in entries:
        temp = entry.temp_c if entry.temp_c is not None else inspection.temp_c
        key = (profile.pk, entry.sg, temp, inspection.hydrometer_compensated)
        if key not in corrected_cache:
            corrected_cache[key] = _q(corrected_cell_sg(profile, entry.sg, temp, inspection.hydrometer_compensated), SG_PLACES)
        cells.append(_Cell(entry.position, entry.sg, corrected_cache[key], entry.temp_c, entry.volts, entry.level))
    return cells


def _store(groups, group_battery, user, report):
    uuids = {key: _client_uuid(key) for key in groups}
    stored = set(Inspection.objects.filter(client_uuid__in=uuids.values()).values_list("client_uuid", flat=True))
    inspections, cells_by_inspection, corrected_cache = [], [], {}
    for key, rows in groups.items():
        if uuids[key] in stored:
            report.inspections_already_stored += 1
            continue
        serial, taken_at, situation = key
        temps = [entry.temp_c for _, entry in rows if entry.temp_c is not None]
        inspection = Inspection(
            battery=group_battery[key], taken_by=user, taken_at=taken_at, situation=situation,
            scope=Inspection.Scope.PILOT if len(rows) == 1 and group_battery[key].profile.positions > 1 else Inspection.Scope.ALL_CELLS,
            temp_c=(sum(temps) / len(temps)).quantize(Decimal("0.1")) if temps else None,
            client_uuid=uuids[key], notes="Imported from CSV",
        )
        entries = sorted((entry for _, entry in rows), key=lambda e: e.position)
        cells = _cells(inspection, group_battery[key].profile, entries, corrected_cache)
        summarise(inspection, cells)
        inspections.append(inspection)
        cells_by_inspection.append(cells)
    with transaction.atomic():
        Inspection.objects.bulk_create(inspections, batch_size=500)
        _insert_cells(zip(inspections, cells_by_inspection))
        battery_ids = sorted({inspection.battery_id for inspection in inspections})
        transaction.on_commit(lambda: signals.inspections_imported.send(Inspection, battery_ids=battery_ids))
    report.inspections_created = len(inspections)
    report.cells_created = sum(len(cells) for cells in cells_by_inspection)
    report.imported = True


def _insert_cells(inspections_and_cells):
    """Store cell readings; on PostgreSQL with COPY, which is several times faster than INSERT for a big file."""
    if connection.vendor != "postgresql":
        CellReading.objects.bulk_create(
            [CellReading(inspection=inspection, **cell._asdict()) for inspection, cells in inspections_and_cells for cell in cells],
            batch_size=2000,
        )
        return

    # Rounded as Django rounds a DecimalField on save (half to even, to the field's places).
    temp_places = Decimal(1).scaleb(-CellReading._meta.get_field("temp_c").decimal_places)
    volts_places = Decimal(1).scaleb(-CellReading._meta.get_field("volts").decimal_places)

    def text(value, places=None):
        if value is None:
            return "\\N"
        return str(value.quantize(places) if places is not None else value)

    buffer = io.StringIO()
    for inspection, cells in inspections_and_cells:
        for c in cells:
            buffer.write(f"{inspection.pk}\t{c.position}\t{text(c.sg)}\t{text(c.sg_corrected)}\t"
                         f"{text(c.temp_c, temp_places)}\t{text(c.volts, volts_places)}\t{c.level}\n")
    buffer.seek(0)
    with connection.cursor() as cursor:
        cursor.copy_expert(
            f"COPY {CellReading._meta.db_table} (inspection_id, position, sg, sg_corrected, temp_c, volts, level) FROM STDIN",
            buffer,
        )


def write_battery_readings(out, battery):
    """Every current cell reading of a battery, oldest first, in the import format plus computed columns."""
    writer = csv.writer(out)
    writer.writerow(EXPORT_COLUMNS)
    cells = (
        CellReading.objects.filter(inspection__in=Inspection.objects.current().filter(battery=battery))
        .select_related("inspection")
        .order_by("inspection__taken_at", "inspection_id", "position")
    )
    tz = battery.site.tzinfo
    for cell in cells.iterator(chunk_size=2000):
        inspection = cell.inspection
        writer.writerow([
            battery.serial,
            inspection.taken_at.astimezone(tz).isoformat(timespec="minutes"),
            inspection.situation,
            cell.position,
            cell.sg if cell.sg is not None else "",
            cell.temp_c if cell.temp_c is not None else (inspection.temp_c if inspection.temp_c is not None else ""),
            cell.volts if cell.volts is not None else "",
            cell.level,
            cell.sg_corrected if cell.sg_corrected is not None else "",
            inspection.soc_percent if inspection.soc_percent is not None else "",
        ])

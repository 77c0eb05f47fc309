"""CSV in and out, one row per cell reading.

Rows with the same serial, taken_at and situation form one inspection. Importing the same file
twice stores it once: each inspection's client UUID is derived from those three values.
"""
import csv
import datetime as dt
import io
import uuid
from collections import namedtuple
from dataclasses import dataclass, field
from operator import itemgetter
from decimal import Decimal, InvalidOperation

from django.db import connection, models, transaction
from django.utils import timezone
from django.utils.dateparse import parse_datetime

from fleetcare import chemistry
from fleetcare.readings import signals
from fleetcare.readings.forms import SG_HIGH, SG_LOW, TEMP_HIGH_C, TEMP_LOW_C
from fleetcare.readings.models import CellReading, Inspection
from fleetcare.readings.services import SG_PLACES, _q, corrected_cell_sg, summarise
from fleetcare.spreadsheets import CsvWriter

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


_UNSEEN = object()


def _decimal(text):
    """The text as a finite Decimal, or None when it is not a number."""
    try:
        value = Decimal(text)
    except InvalidOperation:
        return None
    return value if value.is_finite() else None


class _Memo:
    """What a file repeats row after row, worked out once per import: battery facts, times, SG and numbers."""

    def __init__(self, batteries):
        self.batteries = batteries
        self.latest_allowed = timezone.now() + dt.timedelta(hours=1)
        self.facts = {}
        self.times = {}
        self.sgs = {}
        self.decimals = {}
        self.cells = {}
        self.positions = {}

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
        found = self.sgs.get(text)
        if found is None:
            try:
                found = (Decimal(str(chemistry.parse_sg(text))).quantize(Decimal("0.001")), None)
            except ValueError as exc:
                found = (None, str(exc))
            self.sgs[text] = found
        return found

    def decimal(self, text):
        if text not in self.decimals:
            self.decimals[text] = _decimal(text)
        return self.decimals[text]

    def position(self, text):
        """A cell number as written -> the number, or None unless it is a whole number from 1."""
        if text not in self.positions:
            cleaned = text.strip()
            self.positions[text] = int(cleaned) if cleaned.isdecimal() and int(cleaned) >= 1 else None
        return self.positions[text]

    def clean_cells(self, battery):
        """{(sg, temp, volts, level) as written: clean_cell's answer} for batteries of this one's profile."""
        return self.cells.setdefault(battery.profile_id, {})

    def clean_cell(self, battery, facts, texts):
        """A good row's cell values for a battery of this profile: (sg, temp, volts, level, corrected SG,
        the row's COPY text after its position); None if the texts have anything wrong (the caller then
        checks the row in full for its messages). Callers keep the answer per distinct texts."""
        sg_text, temp_text, volts_text, level = (text.strip() for text in texts)
        messages, values = _check_cell("", facts, "1", sg_text, temp_text, volts_text, level.lower(), self, False)
        if messages:
            return None
        sg, temp, volts, level = values
        corrected = _q(corrected_cell_sg(battery.profile, sg, temp, False), SG_PLACES)
        text = _copy_text
        copy_tail = f"{text(sg)}\t{text(corrected)}\t{text(temp, TEMP_PLACES)}\t{text(volts, VOLTS_PLACES)}\t{level}\n"
        return sg, temp, volts, level, corrected, copy_tail


def _check_group(serial, taken_text, situation_text, raw_situation, memo):
    """The columns every row of one inspection shares, checked once: (messages, battery, facts, taken_at, situation)."""
    messages = []
    battery = memo.batteries.get(serial)
    if not serial:
        messages.append("serial is empty.")
    elif battery is None:
        messages.append(f"no battery with serial “{serial}” at your sites.")
    facts = memo.battery_facts(battery) if battery is not None else None
    taken_at = memo.taken_at(taken_text, battery)
    if taken_at is None:
        messages.append(f"taken_at “{taken_text}” is not a date and time like 2026-03-01T07:30.")
    elif taken_at > memo.latest_allowed:
        messages.append(f"taken_at {taken_text} is in the future.")
    situation = SITUATIONS.get(situation_text.lower())
    if situation is None:
        messages.append(f"situation “{raw_situation}” is not one of {', '.join(Inspection.Situation.values)}.")
    return messages, battery, facts, taken_at, situation


def _check_cell(serial, facts, cell_text, sg_text, temp_text, volts_text, level, memo, shared_faults):
    """One row's own columns: (messages, (sg, temp, volts, level) or None). shared_faults: the row's inspection
    columns are bad, so a missing value is not worth its own message."""
    messages = []
    position = int(cell_text) if cell_text.isdecimal() else None
    if position is None:
        messages.append(f"cell “{cell_text}” is not a whole number.")
    elif facts is not None and not 1 <= position <= facts[0]:
        messages.append(f"cell {position} does not exist: {serial} has {facts[0]}.")
    sg = None
    if sg_text:
        sg, problem = memo.sg(sg_text)
        if problem:
            messages.append(f"sg: {problem}")
        elif not SG_LOW <= sg <= SG_HIGH:
            messages.append(f"sg {sg} is outside 1.000–1.350.")
        elif facts is not None and not facts[1]:
            messages.append(f"sg given for {serial}, a sealed battery: it cannot be read with a hydrometer.")
    temp = None
    if temp_text:
        temp = memo.decimal(temp_text)
        if temp is None:
            messages.append(f"temp “{temp_text}” is not a number.")
        elif not TEMP_LOW_C <= temp <= TEMP_HIGH_C:
            messages.append(f"temp {temp} °C is outside −30 to 70 °C.")
    volts = None
    if volts_text:
        volts = memo.decimal(volts_text)
        if volts is None:
            messages.append(f"volts “{volts_text}” is not a number.")
        elif facts is not None:
            _, _, cells, low, high, low_d, high_d = facts
            if not low_d <= volts <= high_d:
                messages.append(f"volts {volts} is not plausible for {cells} cell(s) ({low:.2f}–{high:.2f} V).")
    if sg is None and volts is None and not messages and not shared_faults:
        messages.append("neither sg nor volts given.")
    if sg is not None and temp is None and not messages and not shared_faults:
        messages.append("sg given without temp (°C).")
    if level not in ("", "ok", "low"):
        messages.append(f"level “{level}” must be ok, low or empty.")
    if messages or shared_faults:
        return messages, None
    return messages, (sg, temp, volts, level)


def _read_rows(text, report):
    """(column index by name, rows) with empty lines skipped, or None after reporting why the file can't be read."""
    reader = csv.reader(io.StringIO(text, newline=""))  # newline="": also old-Mac \r line endings
    try:
        header = next(reader, None) or []
        rows = [row for row in reader if row]
    except csv.Error as exc:
        report.errors.append((reader.line_num or 1, f"the file cannot be read as CSV ({exc}). Save it as CSV (UTF-8) and try again."))
        return None
    index = {name: i for i, name in enumerate(header)}  # a repeated column: the last one counts
    missing = [c for c in ("serial", "taken_at", "situation", "cell") if c not in index]
    if missing:
        report.errors.append((1, f"missing column(s): {', '.join(missing)}. Expected: {', '.join(COLUMNS)}."))
        return None
    return index, rows


def import_readings(text, *, user, batteries, good_rows_only=False, dry_run=False):
    """Validate every row, then store all inspections in one transaction (or nothing).

    Rows are grouped by their serial, taken_at and situation as written; each group's shared columns
    are checked once, each row's own columns per row. Groups whose columns say the same thing in
    different words ("charged" and "Just charged") are one inspection."""
    report = ImportReport(dry_run=dry_run)
    read = _read_rows(text, report)
    if read is None:
        return report
    index, rows = read
    report.rows_read = len(rows)
    columns = [index.get(c) for c in COLUMNS]
    if None in columns:  # an optional column left out: read it as empty
        rows = [[row[i] if i is not None and i < len(row) else "" for i in columns] for row in rows]
        columns = list(range(len(COLUMNS)))
    width = max(columns) + 1
    padding = [""] * width
    col_serial, col_taken, col_situation, col_cell = columns[:4]
    cell_texts = itemgetter(*columns[4:])  # sg, temp, volts, level as written

    serials = {row[col_serial].strip() for row in rows if len(row) > col_serial}
    memo = _Memo({b.serial: b for b in batteries.filter(serial__in=serials).select_related("profile", "site")})

    errors, positions = report.errors, memo.positions
    groups = {}  # (serial, aware taken_at, situation) -> [(line, position, clean cell values)]
    group_battery, bad_groups = {}, set()
    seen = {}  # (serial, taken_at, situation) as written -> what _check_group found, checked once
    checked = {}  # the same, stripped (what is written may differ only in spaces)
    for line, row in enumerate(rows, start=2):
        if len(row) < width:
            row = row + padding[len(row):]
        written = (row[col_serial], row[col_taken], row[col_situation])
        group = seen.get(written)
        if group is None:
            raw = tuple(text.strip() for text in written)
            group = checked.get(raw)
            if group is None:
                shared, battery, facts, taken_at, situation = _check_group(*raw, row[col_situation], memo)
                key = (raw[0], taken_at, situation)
                if not shared:
                    group_battery[key] = battery
                cells = groups.setdefault(key, []) if not shared else []
                known = memo.clean_cells(battery) if not shared else {}
                group = checked[raw] = (shared, battery, facts, key, known, cells, raw[0])
            seen[written] = group
        shared, battery, facts, key, known, cells, serial = group
        position = positions.get(row[col_cell], _UNSEEN)
        if position is _UNSEEN:
            position = memo.position(row[col_cell])
        if not shared and position is not None and position <= facts[0]:
            texts = cell_texts(row)
            clean = known.get(texts, _UNSEEN)
            if clean is _UNSEEN:
                clean = known[texts] = memo.clean_cell(battery, facts, texts)
            if clean is not None:
                cells.append((line, position, clean))
                continue
        for message in shared:
            errors.append((line, message))
        sg_text, temp_text, volts_text, level_text = (text.strip() for text in cell_texts(row))
        messages, _values = _check_cell(serial, facts, row[col_cell].strip(), sg_text, temp_text, volts_text,
                                        level_text.lower(), memo, bool(shared))
        for message in messages:
            errors.append((line, message))
        bad_groups.add(key)
    for key, members in groups.items():
        if key in bad_groups:
            continue
        serial, taken_at, _ = key
        battery = group_battery[key]
        members.sort(key=lambda member: member[0])
        positions = [position for _, position, _ in members]
        first_line = members[0][0]
        if len(set(positions)) != len(positions):
            errors.append((first_line, f"{serial} at {taken_at:%Y-%m-%d %H:%M}: a cell appears twice."))
            bad_groups.add(key)
        elif len(members) not in (1, battery.profile.positions):
            errors.append((
                first_line,
                f"{serial} at {taken_at:%Y-%m-%d %H:%M}: {len(members)} cells read; the profile has "
                f"{battery.profile.positions} (give all of them, or one for a pilot-cell reading).",
            ))
            bad_groups.add(key)
    errors.sort()
    if errors and not good_rows_only:
        return report
    good = {key: members for key, members in groups.items() if key not in bad_groups}
    if dry_run:
        report.inspections_created = len(good)
        report.cells_created = sum(len(members) for members in good.values())
        return report
    _store(good, group_battery, user, report)
    return report


def _client_uuid(key):
    serial, taken_at, situation = key
    return uuid.uuid5(IMPORT_NAMESPACE, f"{serial}|{taken_at.isoformat()}|{situation}")


# A cell reading before it has an inspection to belong to: what summarise() reads and what is stored.
_Cell = namedtuple("_Cell", "position sg sg_corrected temp_c volts level")


def _store(groups, group_battery, user, report):
    uuids = {key: _client_uuid(key) for key in groups}
    stored = _stored_uuids(list(uuids.values()))
    inspections, cells_by_inspection = [], []
    for key, members in groups.items():
        if uuids[key] in stored:
            report.inspections_already_stored += 1
            continue
        serial, taken_at, situation = key
        battery = group_battery[key]
        members = sorted(members, key=lambda member: member[1])
        temps = [clean[1] for _, _, clean in members if clean[1] is not None]
        inspection = Inspection(
            battery=battery, taken_by=user, taken_at=taken_at, situation=situation,
            scope=Inspection.Scope.PILOT if len(members) == 1 and battery.profile.positions > 1 else Inspection.Scope.ALL_CELLS,
            temp_c=(sum(temps) / len(temps)).quantize(Decimal("0.1")) if temps else None,
            client_uuid=uuids[key], notes="Imported from CSV",
        )
        cells = [(position, clean) for _, position, clean in members]
        summarise(inspection, [_Cell(position, sg, corrected, temp, volts, level)
                               for position, (sg, temp, volts, level, corrected, _copy) in cells])
        inspections.append(inspection)
        cells_by_inspection.append(cells)
    with transaction.atomic():
        _insert_inspections(inspections)
        _insert_cells(zip(inspections, cells_by_inspection))
        battery_ids = sorted({inspection.battery_id for inspection in inspections})
        transaction.on_commit(lambda: signals.inspections_imported.send(Inspection, battery_ids=battery_ids))
    report.inspections_created = len(inspections)
    report.cells_created = sum(len(cells) for cells in cells_by_inspection)
    report.imported = True


def _stored_uuids(client_uuids):
    """Which of these client UUIDs are stored already. On PostgreSQL as one array parameter: as an
    IN list, Django prepared each of a file's thousands of UUIDs on its own (about 0.1 s for 2,000)."""
    if connection.vendor != "postgresql":
        return set(Inspection.objects.filter(client_uuid__in=client_uuids).values_list("client_uuid", flat=True))
    with connection.cursor() as cursor:
        cursor.execute(
            f"SELECT client_uuid FROM {Inspection._meta.db_table} WHERE client_uuid = ANY(%s::uuid[])",
            [[str(u) for u in client_uuids]],
        )
        return {row[0] if isinstance(row[0], uuid.UUID) else uuid.UUID(row[0]) for row in cursor.fetchall()}


def _copy_text(value, places=None):
    """A value in PostgreSQL COPY's text format, rounded as Django rounds a DecimalField on save."""
    if value is None:
        return "\\N"
    if places is not None:
        value = value.quantize(places)
    return str(value)


def _places(model, name):
    return Decimal(1).scaleb(-model._meta.get_field(name).decimal_places)


TEMP_PLACES, VOLTS_PLACES = _places(CellReading, "temp_c"), _places(CellReading, "volts")
_COPY_ESCAPES = str.maketrans({"\\": "\\\\", "\t": "\\t", "\n": "\\n", "\r": "\\r"})


def _copy_field(field):
    """How one model field's value is written in COPY's text format."""
    if isinstance(field, models.BooleanField):
        return lambda value: "t" if value else "f"
    if isinstance(field, models.DateTimeField):
        return lambda value: value.isoformat()
    if isinstance(field, models.DecimalField):
        places = _places(field.model, field.name)
        return lambda value: str(value.quantize(places))
    if isinstance(field, (models.CharField, models.TextField)):
        return lambda value: value.translate(_COPY_ESCAPES)
    return str  # whole numbers, keys and UUIDs


def _insert_inspections(inspections):
    """Store the inspections and give each its primary key; on PostgreSQL with COPY (ids drawn from the
    table's sequence first), elsewhere with bulk_create."""
    if connection.vendor != "postgresql" or not inspections:
        Inspection.objects.bulk_create(inspections, batch_size=500)
        return
    table = Inspection._meta.db_table
    fields = Inspection._meta.concrete_fields
    writers = [(f.attname, _copy_field(f)) for f in fields]
    now = timezone.now()
    with connection.cursor() as cursor:
        cursor.execute(
            "SELECT nextval(pg_get_serial_sequence(%s, 'id')) FROM generate_series(1, %s)", [table, len(inspections)]
        )
        lines = []
        for inspection, (pk,) in zip(inspections, cursor.fetchall()):
            inspection.pk = pk
            inspection.recorded_at = now
            values = [getattr(inspection, attname) for attname, _ in writers]
            lines.append("\t".join("\\N" if value is None else write(value)
                                   for value, (_, write) in zip(values, writers)) + "\n")
        cursor.copy_expert(f"COPY {table} ({', '.join(f.column for f in fields)}) FROM STDIN", io.StringIO("".join(lines)))
    for inspection in inspections:
        inspection._state.adding = False
        inspection._state.db = connection.alias


def _insert_cells(inspections_and_cells):
    """Store cell readings; on PostgreSQL with COPY, which is several times faster than INSERT for a big file."""
    if connection.vendor != "postgresql":
        CellReading.objects.bulk_create(
            [
                CellReading(inspection=inspection, position=position, sg=sg, sg_corrected=corrected, temp_c=temp,
                            volts=volts, level=level)
                for inspection, cells in inspections_and_cells
                for position, (sg, temp, volts, level, corrected, _copy) in cells
            ],
            batch_size=2000,
        )
        return
    lines = []
    for inspection, cells in inspections_and_cells:
        prefix = f"{inspection.pk}\t"
        lines.extend(f"{prefix}{position}\t{clean[5]}" for position, clean in cells)
    with connection.cursor() as cursor:
        cursor.copy_expert(
            f"COPY {CellReading._meta.db_table} (inspection_id, position, sg, sg_corrected, temp_c, volts, level) FROM STDIN",
            io.StringIO("".join(lines)),
        )


def write_battery_readings(out, battery):
    """Every current cell reading of a battery, oldest first, in the import format plus computed columns."""
    writer = CsvWriter(out)
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

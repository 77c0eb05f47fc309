"""CSV in and out, one row per cell reading.

The import is a pipeline of named steps over bounded chunks of the file, so its memory does not grow
with the file: read_rows (text -> Row records) -> group_rows (a reading's consecutive rows) -> check_reading
(-> CheckedReading, or Notes saying what is wrong) -> find_already_stored -> store_readings. Everything
is written inside one transaction: a file with a problem stores nothing unless the good readings are
asked for. A reading is already stored when its battery has a current reading of the same situation
in the same minute, whatever stored it (tablet, API, demo, an earlier import): the import adds nothing
for it.
"""
import contextlib
import contextvars
import csv
import datetime as dt
import gc
import io
import itertools
import threading
import uuid
from collections import Counter
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass, field
from operator import attrgetter, itemgetter
from typing import NamedTuple
from decimal import Decimal, InvalidOperation

from django.conf import settings
from django.db import connection, models, transaction
from django.utils import timezone
from django.utils.dateparse import parse_datetime

from fleetcare import chemistry, words
from fleetcare.fleet import site_time, site_units
from fleetcare.fleet.models import Site
from fleetcare.readings import signals, state, validation
from fleetcare.readings.models import EntryPolicy
from fleetcare.readings.validation import SG_HIGH, SG_LOW, TEMP_HIGH_C, TEMP_LOW_C
from fleetcare.readings.models import CellReading, Inspection
from fleetcare.readings.services import SG_PLACES, _q, corrected_cell_sg, summarise_values
from fleetcare.spreadsheets import CsvWriter, before_inert

COLUMNS = ["serial", "taken_at", "situation", "cell", "sg", "temp", "volts", "level"]
OPTIONAL_COLUMNS = ["temp_unit", "rest_hours"]
REQUIRED_COLUMNS = ["serial", "taken_at", "situation", "cell"]
EXPORT_COLUMNS = COLUMNS + ["sg_corrected", "inspection_soc_percent"]
IMPORT_NAMESPACE = uuid.UUID("6f1c1d2e-5b7a-4c1e-9d55-0c3f2a8e7b10")
SITUATIONS = {value: value for value in Inspection.Situation.values} | {
    label.lower(): value for value, label in Inspection.Situation.choices
}
TEMP_UNITS = {"c": Site.TempUnit.CELSIUS, "°c": Site.TempUnit.CELSIUS, "f": Site.TempUnit.FAHRENHEIT,
              "°f": Site.TempUnit.FAHRENHEIT}
# A header may name the temperature's unit itself ("temp_c", "temp_f"); a temp_unit cell still wins.
TEMP_HEADERS = {"temp": None, "temp_c": Site.TempUnit.CELSIUS, "temp_f": Site.TempUnit.FAHRENHEIT}
LONGEST_VALUE = 20  # characters: no reading is longer; a longer cell is refused before it is parsed
# The import's chunk: rows read, checked and written together (memory is bounded by this, not the file).
CHUNK_ROWS = getattr(settings, "FLEETCARE_IMPORT_CHUNK_ROWS", 10_000)
LISTED_NOTES = 1_000  # notes of each kind kept for the page; the full list goes to the notes file
# Only one import writes at a time (PostgreSQL advisory lock): two imports of the same file store it once.
IMPORT_LOCK_KEY = 0x46435349  # "FCSI"
# A file's dates come from whatever recorded them, not from this tablet.
FILE_DATE_ADVICE = "Check the date in the file (and the clock of whatever recorded it)."


# --- Records ---------------------------------------------------------------------------------------


class Row(NamedTuple):
    """One line of the file, as written (text, stripped). A named tuple rather than a dataclass, as the
    cell records below: one is made per row, and a tuple is made several times faster."""
    line: int
    serial: str
    taken_at: str
    situation: str
    cell: str
    sg: str
    temp: str
    volts: str
    level: str
    temp_unit: str
    rest_hours: str


@dataclass(frozen=True, slots=True)
class Note:
    """Something the import says about a line: a problem (nothing stored for it), a value worth checking
    (stored as written), or a reading already stored."""
    PROBLEM = "problem"
    CHECK = "check"
    STORED = "already stored"

    line: int
    column: str
    message: str
    level: str = PROBLEM
    cell: int | None = None


@dataclass(frozen=True, slots=True)
class CellValues:
    """A row's cell values, checked and converted (°C, SG to 0.001); shared by every row written alike."""
    sg: Decimal | None
    temp_c: Decimal | None
    volts: Decimal | None
    level: str
    sg_corrected: Decimal | None
    temp_unit: str  # the unit the temperature was read in ("" when there is none)
    copy_tail: str  # the cell row's COPY text after its inspection and position
    sg_corrected_float: float | None  # what the summary works from (services.summarise_values)


class CheckedCell(NamedTuple):
    """One checked row: its line, cell position and values."""
    line: int
    position: int
    values: CellValues


@dataclass(frozen=True, slots=True)
class CheckedReading:
    """One inspection ready to store: its battery, moment and cells, all checked."""
    line: int
    battery: object
    taken_at: dt.datetime
    situation: str
    hours_since_charge: Decimal | None
    cells: tuple
    client_uuid: uuid.UUID = field(init=False)  # worked out once: the already-stored check and the write use it

    def __post_init__(self):
        object.__setattr__(self, "client_uuid", uuid.uuid5(
            IMPORT_NAMESPACE, f"{self.battery.serial}|{self.taken_at.isoformat()}|{self.situation}"))

    @property
    def key(self):
        """What makes two readings the same reading: battery, minute and situation."""
        return (self.battery.pk, self.taken_at.replace(second=0, microsecond=0), self.situation)

    @property
    def scope(self):
        if len(self.cells) == 1 and self.battery.profile.positions > 1:
            return Inspection.Scope.PILOT
        return Inspection.Scope.ALL_CELLS

    @property
    def temp_c(self):
        temps = [cell.values.temp_c for cell in self.cells if cell.values.temp_c is not None]
        return (sum(temps) / len(temps)).quantize(Decimal("0.1")) if temps else None

    def describe(self):
        local = site_time.local(self.taken_at, self.battery)
        return f"{self.battery.serial} at {words.moment(local)} ({Inspection.Situation(self.situation).label.lower()})"


@dataclass
class ImportReport:
    """What an import found and did. Notes are listed up to LISTED_NOTES of each level; counts are whole."""
    rows_read: int = 0
    inspections_created: int = 0  # stored, or (dry run) that would be stored
    inspections_already_stored: int = 0
    cells_created: int = 0
    imported: bool = False
    dry_run: bool = False
    problems: list = field(default_factory=list)
    checks: list = field(default_factory=list)
    already: list = field(default_factory=list)
    problem_count: int = 0
    check_count: int = 0
    problem_kinds: Counter = field(default_factory=Counter)
    temp_units: Counter = field(default_factory=Counter)  # ("C" or "F", "column" / "header" / "site") -> rows

    @property
    def ok(self):
        return not self.problem_count

    @property
    def errors(self):
        """The listed problems as (line, message), in line order."""
        return [(note.line, note.message) for note in self.problems]

    def note(self, note, out=None):
        listed, counted = {
            Note.PROBLEM: (self.problems, "problem_count"),
            Note.CHECK: (self.checks, "check_count"),
            Note.STORED: (self.already, None),
        }[note.level]
        if counted:
            setattr(self, counted, getattr(self, counted) + 1)
        if note.level == Note.PROBLEM:
            self.problem_kinds[note.column] += 1
        if len(listed) < LISTED_NOTES:
            listed.append(note)
        if out is not None:
            out.writerow([note.line, note.cell or "", note.column, note.level, note.message])

    def unit_summary(self):
        """Which temperature units the rows were read in, for the summary: ["°F (the site's unit): 48 rows", ...]."""
        where = {"column": "temp_unit column", "header": "column header", "site": "the battery's site unit"}
        return [f"°{unit} ({where[source]}): {rows:,} row{'s' if rows != 1 else ''}"
                for (unit, source), rows in sorted(self.temp_units.items())]

    def as_dict(self):
        """A plain-JSON form of the report (what an import's page keeps)."""
        def notes(items):
            return [[n.line, n.cell, n.column, n.message] for n in items]
        return {
            "rows_read": self.rows_read, "inspections_created": self.inspections_created,
            "inspections_already_stored": self.inspections_already_stored, "cells_created": self.cells_created,
            "imported": self.imported, "dry_run": self.dry_run, "problem_count": self.problem_count,
            "check_count": self.check_count, "problems": notes(self.problems), "checks": notes(self.checks),
            "already": notes(self.already), "problem_kinds": sorted(self.problem_kinds.items(), key=lambda kv: -kv[1]),
            "units": self.unit_summary(),
        }


NOTE_FILE_HEADER = ["line", "cell", "column", "kind", "message"]


# --- Step 1: read ----------------------------------------------------------------------------------


class FileProblem(Exception):
    """The file as a whole cannot be read (not CSV, not UTF-8, no header): (line, message)."""


def read_rows(source, report):
    """Row records from CSV text or a text stream, empty lines skipped. Raises FileProblem."""
    stream = io.StringIO(source, newline="") if isinstance(source, str) else source  # newline="": also old-Mac \r
    reader = csv.reader(stream)
    try:
        header = next(reader, None) or []
    except (csv.Error, UnicodeDecodeError) as exc:
        raise FileProblem(1, _unreadable(exc)) from exc
    index = {}
    for i, name in enumerate(header):  # a repeated column: the last one counts
        index[name.strip().lower().lstrip("\ufeff")] = i
    missing = [c for c in REQUIRED_COLUMNS if c not in index]
    if missing:
        raise FileProblem(1, f"missing {'column' if len(missing) == 1 else 'columns'}: {', '.join(missing)}. Expected: {', '.join(COLUMNS)}.")
    temp_header = next((name for name in TEMP_HEADERS if name in index), "temp")
    report.header_unit = TEMP_HEADERS[temp_header]
    names = REQUIRED_COLUMNS + ["sg", temp_header, "volts", "level"] + OPTIONAL_COLUMNS
    columns = [index.get(name) for name in names]
    width = len(header)
    padding = [""] * (width + 1)
    columns = [width if i is None else i for i in columns]  # an absent column reads the empty cell past the end
    cells = itemgetter(*columns)
    strip = str.strip
    make = Row._make
    try:
        for row in reader:
            size = len(row)
            if size == width:
                row.append("")
            elif not size:
                continue
            elif size < width:
                row += padding[size:]
            else:
                row = row[:width] + [""]
            yield make((reader.line_num, *map(strip, cells(row))))
    except (csv.Error, UnicodeDecodeError) as exc:
        raise FileProblem(reader.line_num or 1, _unreadable(exc)) from exc


def _unreadable(exc):
    if isinstance(exc, UnicodeDecodeError):
        return "the file is not UTF-8 text. Save it as CSV (UTF-8) and try again."
    return f"the file cannot be read as CSV ({exc}). Save it as CSV (UTF-8) and try again."


# --- Step 2: group ---------------------------------------------------------------------------------


def group_rows(rows):
    """Lists of consecutive rows that share serial, taken_at and situation as written: one reading each
    (Checker.readings_in joins neighbours that say the same in other words)."""
    for _, group in itertools.groupby(rows, key=attrgetter("serial", "taken_at", "situation")):
        yield list(group)


def chunks(groups, rows_per_chunk):
    """Groups collected into chunks of about rows_per_chunk rows."""
    chunk, size = [], 0
    for group in groups:
        chunk.append(group)
        size += len(group)
        if size >= rows_per_chunk:
            yield chunk
            chunk, size = [], 0
    if chunk:
        yield chunk


# --- Step 3: check ---------------------------------------------------------------------------------


class Checker:
    """Checks a file's readings; remembers what the file repeats (batteries, SG texts, cell values)."""

    def __init__(self, batteries, report, notes_out=None, now=None):
        self.batteries = batteries
        self.known = {}  # serial -> Battery or None
        self.report = report
        self.notes_out = notes_out
        self.now = now or timezone.now()
        self.policies = None  # the entry settings' rows, loaded once for the whole file
        self.limits = {}  # battery pk -> validation.Limits: the rules every entry path applies
        self.cell_values = {}  # (profile, site unit, header unit) -> {texts: CellValues or None}
        self.sgs = {}
        self.positions = {}  # cell number as written -> number or None
        self.seen = {}  # reading key -> first line, to find a reading given twice in one file
        self.situations = {}  # profile pk -> the situations its readings may be taken in

    def limits_of(self, battery):
        """The battery's entry limits (validation.limits_for with the settings in force), once per battery."""
        limits = self.limits.get(battery.pk)
        if limits is None:
            if self.policies is None:
                self.policies = list(EntryPolicy.objects.all())
            values = validation.settings_for(battery, self.policies)
            limits = self.limits[battery.pk] = validation.limits_for(battery, self.now, values)
        return limits

    def note(self, line, column, message, level=Note.PROBLEM, cell=None):
        self.report.note(Note(line, column, message, level, cell), self.notes_out)

    def load_batteries(self, chunk):
        """Find the chunk's serials not seen yet, in one query. A serial our export neutralised against spreadsheet
        formulas ("'=B02", spreadsheets.inert_text) is read back as the serial it was, unless one is named so."""
        serials = {group[0].serial for group in chunk} - self.known.keys()
        if serials:
            unguarded = {serial: before_inert(serial) for serial in serials}
            wanted = serials | {plain for plain in unguarded.values() if plain is not None}
            found = {b.serial: b for b in self.batteries.filter(serial__in=wanted).select_related("profile", "site")}
            for serial in serials:
                self.known[serial] = found.get(serial) or found.get(unguarded[serial])

    def readings_in(self, chunk):
        """(rows, shared columns checked) per reading; neighbouring groups that name the same reading in
        other words ("charged" and "Just charged", a time with and without its offset) are one reading."""
        merged = []
        for rows in chunk:
            shared = self._check_shared(rows[0])
            if merged and not shared[3] and not merged[-1][1][3] and merged[-1][1][:3] == shared[:3]:
                merged[-1][0].extend(rows)
            else:
                merged.append((rows, shared))
        return merged

    def check_reading(self, rows, shared):
        """A CheckedReading, or None after noting every problem of these rows."""
        first = rows[0]
        battery, taken_at, situation, problems = shared
        if problems:
            for row in rows:
                for column, message in problems:
                    self.note(row.line, column, message)
                self._note_cell_problems(row, battery, shared_faults=True)
            return None
        profile = battery.profile
        site = battery.site
        memo = self.cell_values.setdefault((profile.pk, site.temp_unit, self.report.header_unit), {})
        if len(memo) > 100_000:  # bounded by the values a file can hold, but kept small all the same
            memo.clear()
        cells, bad, units = [], False, []
        positions = profile.positions
        known_positions = self.positions
        cell = tuple.__new__  # CheckedCell(...) without its Python-level __new__: this loop runs once a row
        for row in rows:
            position = known_positions.get(row.cell, _UNSEEN)
            if position is _UNSEEN:
                position = _position(row.cell)
                if len(known_positions) < 10_000:
                    known_positions[row.cell] = position
            texts = row[5:10]  # sg, temp, volts, level, temp_unit
            values = memo.get(texts, _UNSEEN)
            if values is _UNSEEN:
                values = memo[texts] = self._cell_values(battery, texts)
            if values is None or position is None or position > positions:
                self._note_cell_problems(row, battery, shared_faults=False)
                bad = True
                continue
            if values.temp_unit:
                units.append(values.temp_unit)
            cells.append(cell(CheckedCell, (row.line, position, values)))
        self.report.temp_units.update(units)
        hours, hours_problem = self._rest_hours(rows)
        if hours_problem:
            self.note(first.line, "rest_hours", hours_problem)
            bad = True
        if bad:
            return None
        reading = CheckedReading(first.line, battery, taken_at, situation, hours, tuple(cells))
        taken = [cell.position for cell in cells]
        if len(set(taken)) != len(taken):
            self.note(first.line, "cell", f"{reading.describe()}: a cell appears twice.")
            return None
        if len(cells) not in (1, positions):
            self.note(first.line, "cell", f"{reading.describe()}: {len(cells)} cells read; the profile has "
                                          f"{positions} (give all of them, or one for a pilot-cell reading).")
            return None
        earlier = self.seen.setdefault(reading.key, first.line)
        if earlier != first.line:
            self.note(first.line, "taken_at", f"{reading.describe()} is already in this file at line {earlier}: "
                                              "give each reading once, its rows together.")
            return None
        self._note_slips(reading)
        return reading

    def _check_shared(self, row):
        """The columns every row of one reading shares: (battery, taken_at, situation, [(column, message)])."""
        problems = []
        battery = self.known.get(row.serial)
        if not row.serial:
            problems.append(("serial", "serial is empty."))
        elif battery is None:
            problems.append(("serial", f"no battery with serial “{_shown(row.serial)}” at your sites."))
        taken_at, problem = self._taken_at(row.taken_at, battery)
        if problem:
            problems.append(("taken_at", problem))
        situation = SITUATIONS.get(row.situation.lower())
        if situation is None:
            problems.append(("situation", f"situation “{_shown(row.situation)}” is not one of "
                                          f"{', '.join(Inspection.Situation.values)}."))
        elif battery is not None:
            situations = self.situations.get(battery.profile.pk)
            if situations is None:
                situations = self.situations[battery.profile.pk] = validation.situations_for(battery.profile)
            refused = validation.situation_problem(situation, situations)
            if refused:
                problems.append(("situation", refused))
        return battery, taken_at, situation, problems

    def _taken_at(self, text, battery):
        """(aware datetime, None) or (None, message). Times without an offset are the battery's site time."""
        example = "taken_at “{}” is not a date and time like 2026-03-01T07:30."
        if len(text) > 40:
            return None, example.format(_shown(text))
        try:
            taken_at = parse_datetime(text)
        except ValueError:
            taken_at = None
        if taken_at is None:
            return None, example.format(_shown(text))
        if timezone.is_naive(taken_at):
            if battery is None:
                return None, None  # the serial's own message says enough
            try:
                taken_at = site_time.to_moment(taken_at, battery)
            except site_time.NonexistentLocalTime as exc:
                return None, f"taken_at {_shown(text)}: {exc}"
            except OverflowError:
                return None, f"taken_at {_shown(text)}: that date cannot be right. {FILE_DATE_ADVICE}"
        if battery is None:
            return None, None  # the serial's own message says enough; a date is judged against its battery
        problem = validation.when_problem(taken_at, self.limits_of(battery), self.now, label=f"taken_at {_shown(text)}",
                                          advice=FILE_DATE_ADVICE)
        if problem:
            return None, problem
        return taken_at.astimezone(dt.timezone.utc), None

    def _rest_hours(self, rows):
        texts = {row.rest_hours for row in rows} - {""}
        if not texts:
            return None, None
        if len(texts) > 1:
            return None, f"rest_hours differs between the rows of one reading ({', '.join(sorted(map(_shown, texts)))})."
        text = texts.pop()
        hours = _decimal(text)
        if hours is None or not 0 <= hours <= 9999:
            return None, f"rest_hours “{_shown(text)}” is not a number of hours from 0 to 9999."
        return hours.quantize(Decimal("0.1")), None

    def _sg(self, text):
        found = self.sgs.get(text)
        if found is None:
            try:
                found = (Decimal(str(chemistry.parse_sg(text))).quantize(Decimal("0.001")), None)
            except (ValueError, InvalidOperation) as exc:
                found = (None, str(exc))
            if len(self.sgs) < 100_000:
                self.sgs[text] = found
        return found

    def _cell_values(self, battery, texts):
        """A row's values for a battery of this profile and site, or None if anything in them is wrong."""
        problems, values = self._check_values(battery, *texts)
        if problems:
            return None
        sg, temp_c, volts, level, unit = values
        corrected = _q(corrected_cell_sg(battery.profile, sg, temp_c, False), SG_PLACES)
        tail = (f"{_copy_text(sg)}\t{_copy_text(corrected)}\t{_copy_text(temp_c, TEMP_PLACES)}\t"
                f"{_copy_text(volts, VOLTS_PLACES)}\t{level}\n")
        return CellValues(sg, temp_c, volts, level, corrected, unit, tail, None if corrected is None else float(corrected))

    def _check_values(self, battery, sg_text, temp_text, volts_text, level_text, unit_text):
        """([(column, message)], (sg, temp °C, volts, level, (unit, source)) or None)."""
        problems = []
        profile, site = battery.profile, battery.site
        sg = None
        if len(sg_text) > LONGEST_VALUE:
            problems.append(("sg", "sg is too long to be a reading."))
        elif sg_text:
            sg, problem = self._sg(sg_text)
            if problem:
                problems.append(("sg", f"sg: {problem}"))
            elif not SG_LOW <= sg <= SG_HIGH:
                problems.append(("sg", f"sg {sg} is outside 1.000–1.350."))
            elif not profile.is_flooded:
                problems.append(("sg", f"sg given for {battery.serial}, a sealed battery: it cannot be read with a hydrometer."))
        unit, source = site.temp_unit, "site"
        if self.report.header_unit:
            unit, source = self.report.header_unit, "header"
        if unit_text:
            unit = TEMP_UNITS.get(unit_text.lower())
            source = "column"
            if unit is None:
                problems.append(("temp_unit", f"temp_unit “{_shown(unit_text)}” must be C or F."))
        temp_c = None
        if len(temp_text) > LONGEST_VALUE:
            problems.append(("temp", "temp is too long to be a reading."))
        elif temp_text and unit is not None:
            temp = _decimal(temp_text)
            if temp is None:
                problems.append(("temp", f"temp “{_shown(temp_text)}” is not a number."))
            else:
                temp_c = temp if unit == Site.TempUnit.CELSIUS else Decimal(str(round(chemistry.f_to_c(float(temp)), 1)))
                if not TEMP_LOW_C <= temp_c <= TEMP_HIGH_C:
                    limits = "−30 to 70 °C" if unit == Site.TempUnit.CELSIUS else "−22 to 158 °F"
                    problems.append(("temp", f"temp {temp} °{unit} is outside {limits}."))
        volts = None
        if len(volts_text) > LONGEST_VALUE:
            problems.append(("volts", "volts is too long to be a reading."))
        elif volts_text:
            volts = _decimal(volts_text)
            if volts is None:
                problems.append(("volts", f"volts “{_shown(volts_text)}” is not a number."))
            else:
                cells = profile.cells_per_block if profile.reads_by_block else 1
                low, high = chemistry.plausible_volts_range(cells, profile.technology)
                if not Decimal(str(low)) <= volts <= Decimal(str(high)):
                    problems.append(("volts", f"volts {volts} is not plausible for {words.count(cells, 'cell')} ({low:.2f}–{high:.2f} V)."))
        if sg is None and volts is None and not problems:
            problems.append(("sg", "neither sg nor volts given."))
        if sg is not None and temp_c is None and not problems:
            problems.append(("temp", "sg given without temp."))
        level = level_text.lower()
        if level not in ("", "ok", "low"):
            problems.append(("level", f"level “{_shown(level_text)}” must be ok, low or empty."))
        if problems:
            return problems, None
        return problems, (sg, temp_c, volts, level, (unit, source) if temp_c is not None else "")

    def _note_cell_problems(self, row, battery, shared_faults):
        position = _position(row.cell)
        if position is None:
            self.note(row.line, "cell", f"cell “{_shown(row.cell)}” is not a whole number.")
        elif battery is not None and position > battery.profile.positions:
            self.note(row.line, "cell", f"cell {position} does not exist: {battery.serial} has {battery.profile.positions}.")
        if battery is None:
            return
        problems, _ = self._check_values(battery, row.sg, row.temp, row.volts, row.level, row.temp_unit)
        for column, message in problems:
            if shared_faults and message in ("neither sg nor volts given.", "sg given without temp."):
                continue
            self.note(row.line, column, message, cell=position)

    def _note_slips(self, reading):
        """Cells unlike the rest of the tray (validation.find_suspects, the entry screens' rule): the reading was
        taken, so they are stored as written, but each is listed with its line and cell to check."""
        sgs = {cell.position: cell.values.sg for cell in reading.cells if cell.values.sg is not None}
        if not sgs:
            return
        suspects = validation.find_suspects(sgs, self.limits_of(reading.battery))
        if not suspects:
            return
        lines = {cell.position: cell.line for cell in reading.cells}
        for position, suspect in suspects.items():
            self.note(lines[position], "sg", f"cell {position}: {suspect.fact}: {suspect.likely}? "
                                             "Stored as written; check it.", level=Note.CHECK, cell=position)


_UNSEEN = object()


def _position(text):
    """A cell number as written -> the number, or None unless it is a whole number from 1 (at most 4 digits)."""
    if text.isdecimal() and len(text) <= 4:
        value = int(text)
        return value if value >= 1 else None
    return None


def _decimal(text):
    """The text as a finite Decimal, or None when it is not a number."""
    if len(text) > LONGEST_VALUE:
        return None
    try:
        value = Decimal(text)
    except InvalidOperation:
        return None
    return value if value.is_finite() else None


def _shown(text):
    """A cell's text for a message, cut short if it is long."""
    return text if len(text) <= 40 else f"{text[:37]}…"


# --- Step 4: already stored ------------------------------------------------------------------------


def find_already_stored(readings):
    """The indexes of readings already stored: the battery has a current reading of the same situation in
    the same minute (whoever stored it), or this import stored it before (its client UUID)."""
    if not readings:
        return set()
    found = set()
    uuids = {reading.client_uuid: i for i, reading in enumerate(readings)}
    found.update(uuids[u] for u in _stored_uuids(list(uuids)))
    if connection.vendor == "postgresql":
        with connection.cursor() as cursor:
            cursor.execute(
                # LATERAL ... LIMIT 1: one probe of the (battery, taken_at) index per reading. As EXISTS, PostgreSQL
                # chose a hash join over every stored reading for a chunk of a few hundred, which grew with history.
                f"""SELECT k.i - 1 FROM unnest(%s::bigint[], %s::timestamptz[], %s::text[]) WITH ORDINALITY AS k(b, t, s, i)
                    CROSS JOIN LATERAL (
                        SELECT 1 FROM {Inspection._meta.db_table} r
                         WHERE r.battery_id = k.b AND r.taken_at >= k.t AND r.taken_at < k.t + interval '1 minute'
                           AND r.situation = k.s AND r.is_current AND r.deleted_at IS NULL
                         LIMIT 1) AS stored""",
                [[r.battery.pk for r in readings], [r.key[1] for r in readings], [r.situation for r in readings]],
            )
            found.update(row[0] for row in cursor.fetchall())
        return found
    keys = {reading.key: i for i, reading in enumerate(readings)}
    minutes = [key[1] for key in keys]
    stored = Inspection.objects.current().filter(
        battery_id__in={key[0] for key in keys}, taken_at__gte=min(minutes),
        taken_at__lt=max(minutes) + dt.timedelta(minutes=1),
    ).values_list("battery_id", "taken_at", "situation")
    for battery_id, taken_at, situation in stored.iterator():
        i = keys.get((battery_id, taken_at.replace(second=0, microsecond=0), situation))
        if i is not None:
            found.add(i)
    return found


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


# --- Step 5: store ---------------------------------------------------------------------------------


def store_readings(readings, user, folding=None):
    """Write these readings (inspections with their summaries, and their cells); returns the cells written.
    Their batteries' kept state is brought up to date now, or by `folding` (a state.Folding) when the caller
    writes it at the end of a bulk import."""
    postgres = connection.vendor == "postgresql"
    inspections = []
    for reading in readings:
        fields = dict(
            battery=reading.battery, taken_at=reading.taken_at, situation=reading.situation, scope=reading.scope,
            temp_c=reading.temp_c, hours_since_charge=reading.hours_since_charge, client_uuid=reading.client_uuid,
            notes="Imported from CSV", chosen_via=Inspection.ChosenVia.IMPORT,
        )
        # On PostgreSQL the row goes out through COPY, so a plain record is enough (a model instance costs more).
        inspection = _PendingInspection(battery_id=reading.battery.pk, taken_by_id=user.pk, **fields) if postgres \
            else Inspection(taken_by=user, **fields)
        cells = sorted(reading.cells, key=_position_of)
        summarise_values(inspection,
                         [(cell.position, cell.values.sg_corrected_float) for cell in cells if cell.values.sg_corrected is not None],
                         [cell.values.volts for cell in cells if cell.values.volts is not None])
        inspections.append(inspection)
    _insert_inspections(inspections)
    cells = _insert_cells(zip(inspections, readings))
    if folding is None:
        state.absorb_inspections(inspections)
    else:
        folding.add(inspections)
    return cells


_position_of = attrgetter("position")


class _PendingInspection:
    """An inspection on its way to COPY: what summarise() reads and fills in, and the columns written
    (any column not set takes its model default)."""

    def __init__(self, **values):
        self.__dict__.update(values)


# --- The import ------------------------------------------------------------------------------------


def import_readings(source, *, user, batteries, good_rows_only=False, dry_run=False, notes_out=None,
                    progress=None, rows_per_chunk=None):
    """Check every row and store every reading in one transaction, or nothing (unless good_rows_only).

    source: CSV text or a text stream. notes_out: a text stream for the full list of notes as CSV.
    progress(report): called after each chunk. Readings already stored are counted and left alone."""
    report = ImportReport(dry_run=dry_run)
    out = CsvWriter(notes_out) if notes_out is not None else None
    if out is not None:
        out.writerow(NOTE_FILE_HEADER)
    checker = Checker(batteries, report, out)
    if dry_run:
        _run(source, checker, report, None, progress, rows_per_chunk)
        return report
    with transaction.atomic():
        if connection.vendor == "postgresql":
            with connection.cursor() as cursor:
                cursor.execute("SELECT pg_advisory_xact_lock(%s)", [IMPORT_LOCK_KEY])
        battery_ids, folding = set(), state.Folding()
        _run(source, checker, report, (user, battery_ids, good_rows_only, folding), progress, rows_per_chunk)
        if report.problem_count and not good_rows_only:
            transaction.set_rollback(True)
            report.inspections_created = report.cells_created = 0
            return report
        report.imported = True
        folding.write()
        ids = sorted(battery_ids)
        if ids:
            transaction.on_commit(lambda: signals.inspections_imported.send(Inspection, battery_ids=ids))
    return report


def _run(source, checker, report, store, progress, rows_per_chunk):
    """Read, check and (when store is (user, battery_ids, good_rows_only, folding)) write the file chunk by chunk."""
    rows = _counted(read_rows(source, report), report)
    copying = store is not None and connection.vendor == "postgresql"
    with _collecting_less(), _Copier.running() if copying else contextlib.nullcontext():
        try:
            _run_chunks(rows, checker, report, store, progress, rows_per_chunk)
        except FileProblem as exc:
            line, message = exc.args
            checker.note(line, "file", message)
    report.problems.sort(key=lambda note: note.line)
    report.checks.sort(key=lambda note: note.line)


def _run_chunks(rows, checker, report, store, progress, rows_per_chunk):
    """Each chunk: check its readings, find those already stored, store the rest, report progress."""
    for chunk in chunks(group_rows(rows), rows_per_chunk or CHUNK_ROWS):
        checker.load_batteries(chunk)
        readings = [r for r in (checker.check_reading(*found) for found in checker.readings_in(chunk)) if r is not None]
        already = find_already_stored(readings)
        new = []
        for i, reading in enumerate(readings):
            if i in already:
                report.inspections_already_stored += 1
                checker.note(reading.line, "taken_at", f"{reading.describe()} is already stored.", level=Note.STORED)
            else:
                new.append(reading)
        writing = store is not None and (store[2] or not report.problem_count)
        if writing and new:
            user, battery_ids, _, folding = store
            report.cells_created += store_readings(new, user, folding)
            battery_ids.update(reading.battery.pk for reading in new)
        elif store is None:
            report.cells_created += sum(len(reading.cells) for reading in new)
        report.inspections_created += len(new)
        if progress is not None:
            progress(report)


# Objects made between two runs of the cyclic garbage collector while an import runs (Python's default: 700).
IMPORT_GC_THRESHOLD = 50_000
_collector = {"imports": 0, "threshold": None}
_collector_lock = threading.Lock()


@contextlib.contextmanager
def _collecting_less():
    """The cyclic garbage collector runs less often while imports run. A chunk's rows, cells and readings live until
    the chunk is stored, so at the default threshold the collector kept scanning them (and what they survived into,
    the whole process): some 15 % of the import's time. Reference counting still frees each chunk once stored, and
    cycles are still collected. Imports on several threads share one setting, restored when the last ends."""
    with _collector_lock:
        if not _collector["imports"]:
            _collector["threshold"] = gc.get_threshold()
            if 0 < _collector["threshold"][0] < IMPORT_GC_THRESHOLD:
                gc.set_threshold(IMPORT_GC_THRESHOLD, *_collector["threshold"][1:])
        _collector["imports"] += 1
    try:
        yield
    finally:
        with _collector_lock:
            _collector["imports"] -= 1
            if not _collector["imports"]:
                gc.set_threshold(*_collector["threshold"])


def _counted(rows, report):
    for row in rows:
        report.rows_read += 1
        yield row


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
    fields = [f for f in Inspection._meta.concrete_fields if not f.primary_key]
    writers = [(f.attname, _copy_field(f), f.get_default()) for f in fields]
    now = timezone.now()
    with connection.cursor() as cursor:
        cursor.execute(
            "SELECT nextval(pg_get_serial_sequence(%s, 'id')) FROM generate_series(1, %s)", [table, len(inspections)]
        )
        lines = []
        # Each column's last value and its text: most columns repeat the row before's value (the same object).
        last = [(_UNSEEN, None)] * len(writers)
        numbered = list(enumerate(writers))
        for inspection, (pk,) in zip(inspections, cursor.fetchall()):
            inspection.pk = inspection.id = pk
            inspection.recorded_at = now
            values = inspection.__dict__
            row = [str(pk)]
            for i, (attname, write, default) in numbered:
                value = values.get(attname, default)
                before, text = last[i]
                if value is not before:
                    text = "\\N" if value is None else write(value)
                    last[i] = (value, text)
                row.append(text)
            lines.append("\t".join(row) + "\n")
    columns = ", ".join(["id"] + [f.column for f in fields])
    _copy(f"COPY {table} ({columns}) FROM STDIN", "".join(lines))


def _insert_cells(inspections_and_readings):
    """Store cell readings (on PostgreSQL with COPY, several times faster than INSERT); returns how many."""
    if connection.vendor != "postgresql":
        rows = [
            CellReading(inspection=inspection, position=cell.position, sg=cell.values.sg,
                        sg_corrected=cell.values.sg_corrected, temp_c=cell.values.temp_c, volts=cell.values.volts,
                        level=cell.values.level)
            for inspection, reading in inspections_and_readings
            for cell in reading.cells
        ]
        CellReading.objects.bulk_create(rows, batch_size=2000)
        return len(rows)
    lines = []
    for inspection, reading in inspections_and_readings:
        prefix = f"{inspection.pk}\t"
        lines.extend(f"{prefix}{cell.position}\t{cell.values.copy_tail}" for cell in reading.cells)
    _copy(f"COPY {CellReading._meta.db_table} (inspection_id, position, sg, sg_corrected, temp_c, volts, level) FROM STDIN",
          "".join(lines))
    return len(lines)


def _copy(sql, text):
    """Run one COPY ... FROM STDIN with this text: on the import's copying thread when one is running (_Copier),
    else now."""
    copier = _COPIER.get()
    if copier is not None:
        copier.send(sql, text)
        return
    with connection.cursor() as cursor:
        _send(cursor, sql, text)


def _send(cursor, sql, text):
    # One read of the whole text: psycopg2 takes the GIL back for every piece it reads, and a thread waiting
    # for the GIL while another computes waits up to sys.getswitchinterval() (5 ms) each time.
    cursor.copy_expert(sql, io.StringIO(text), len(text) + 1)


class _Copier:
    """The import's COPY statements run one after another on a thread of their own, on the import's own
    connection and so in its transaction: PostgreSQL stores chunk N while the import reads and checks chunk N+1
    (psycopg2 lets go of the GIL while it waits for the server). Every other query of the import waits first for
    the COPY statements sent (one connection runs one statement at a time) and raises the first one's error, as
    does the end of `running`; the caller's atomic block then rolls the whole import back."""

    def __init__(self, database):
        database.ensure_connection()
        self.raw = database.connection  # psycopg2: threads may share a connection (not a cursor)
        self.thread = ThreadPoolExecutor(max_workers=1, thread_name_prefix="csv-import-copy")
        self.sent = []

    @classmethod
    @contextlib.contextmanager
    def running(cls):
        copier = cls(connection)
        token = _COPIER.set(copier)
        try:
            with connection.execute_wrapper(copier.before_query):
                yield copier
            copier.wait()
        finally:
            _COPIER.reset(token)
            copier.thread.shutdown(wait=True)  # on an error too: nothing is left running on the connection

    def send(self, sql, text):
        self.sent.append(self.thread.submit(self._copy, sql, text))

    def _copy(self, sql, text):
        with self.raw.cursor() as cursor:
            _send(cursor, sql, text)

    def wait(self):
        """Return when every COPY sent is done; raise the first one's error."""
        sent, self.sent = self.sent, []
        errors = [error for error in (done.exception() for done in sent) if error is not None]
        if errors:
            raise errors[0]

    def before_query(self, execute, sql, params, many, context):
        self.wait()
        return execute(sql, params, many, context)


_COPIER = contextvars.ContextVar("csv_import_copier", default=None)


def write_battery_readings(out, battery):
    """Every current cell reading of a battery, oldest first, in the import format plus computed columns."""
    writer = CsvWriter(out)
    writer.writerow(export_header(battery))
    cells = (
        CellReading.objects.filter(inspection__in=Inspection.objects.current().filter(battery=battery))
        .select_related("inspection")
        .order_by("inspection__taken_at", "inspection_id", "position")
    )
    for cell in cells.iterator(chunk_size=2000):
        inspection = cell.inspection
        temp_c = cell.temp_c if cell.temp_c is not None else inspection.temp_c
        writer.writerow([
            battery.serial,
            site_time.local(inspection.taken_at, battery).isoformat(timespec="minutes"),
            inspection.situation,
            cell.position,
            cell.sg if cell.sg is not None else "",
            site_units.temp_shown(temp_c, battery) if temp_c is not None else "",
            cell.volts if cell.volts is not None else "",
            cell.level,
            cell.sg_corrected if cell.sg_corrected is not None else "",
            inspection.soc_percent if inspection.soc_percent is not None else "",
        ])


def export_header(battery):
    """The import's columns with the temperature's unit in its name (temp_c or temp_f, the site's unit, which
    the import reads back), then the computed columns. taken_at carries the site's offset."""
    temp = f"temp_{site_units.temp_unit_code(battery).lower()}"
    return [temp if name == "temp" else name for name in EXPORT_COLUMNS]


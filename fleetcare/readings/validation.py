"""One validation of a reading: every rule on a single reading's values, in one place.

The tablet form, the API (through the form), the CSV import and the tablet's offline check all apply
these rules. The browser gets the same numbers as JSON from `limits_for(battery).as_json()`, so the
offline check cannot drift from the server's. Rules that need a battery's history (findings) are not
here: these judge one reading on its own.

Messages are for the crew and name the box they belong to; keys follow the form's field names
(`temp`, `taken_at`, `sg_3`, `volts_2`, `confirm_3`, `__all__`).
"""
import bisect
import datetime as dt
from dataclasses import dataclass
from decimal import Decimal, InvalidOperation
from statistics import median

from django.db.models import Q as models_q

from fleetcare import chemistry, policy_layers, words
from fleetcare.policy_layers import Setting

SG_LOW, SG_HIGH = Decimal("1.000"), Decimal("1.350")
TEMP_LOW_C, TEMP_HIGH_C = Decimal("-30"), Decimal("70")
SG_PLACES = Decimal("0.001")
# Fewest other cells the median of the tray is taken over before a cell is judged against it.
SLIP_MIN_OTHER_CELLS = 3


SETTINGS = (
    Setting("slip_above_median_sg", "suspect entry: cell above the median of the other cells by more than",
            Decimal("0.020"), "SG",
            "common practice: after charge a cell rarely reads high; a high reading is usually a misread, a "
            "typing slip or acid added by mistake. 0.020 is four float-hydrometer graduations (0.005 each, "
            "field notes), so instrument noise alone does not reach it"),
    Setting("slip_below_median_sg", "suspect entry: cell below the median of the other cells by more than",
            Decimal("0.050"), "SG",
            "common practice: a failing cell reads 0.030-0.050 below the others (field notes); a cell further "
            "down is asked for once, so a real weak cell is kept and a slip is caught"),
    Setting("plausible_band_margin_sg", "suspect entry: outside the profile's discharged to full-charge SG, "
            "widened by", Decimal("0.030"), "SG",
            "FleetCare default: the nameplate's discharged and full-charge SG (field notes: about 1.100-1.150 "
            "and 1.280-1.300) with room for temperature (0.0007 per °C, common practice) and hydrometer error"),
    Setting("future_minutes", "a reading may be dated ahead of now by at most", Decimal("10"), "minutes",
            "FleetCare default: room for a tablet clock a few minutes fast, none for a wrong day or year",
            integer=True),
)
BY_NAME = {s.name: s for s in SETTINGS}
EARLIEST_WHEN_UNKNOWN = dt.date(2000, 1, 1)


def setting_defaults():
    return {s.name: s.default for s in SETTINGS}


# ---- Single values --------------------------------------------------------------------------------

def parse_sg(text):
    """(SG as Decimal to 0.001, None) or (None, message) for what the crew typed in one SG box."""
    if not str(text).isascii():  # "١٢٦٥" or "２６５": digits a tablet keyboard does not type; the API refuses them too
        return None, f"{text!s} is not a number typed with 0-9. Enter a specific gravity such as 1.265 or 265."
    try:
        sg = Decimal(str(chemistry.parse_sg(text))).quantize(SG_PLACES)
    except ValueError as exc:
        return None, str(exc)
    except InvalidOperation:
        return None, f"{text!s} is not a hydrometer reading. Enter a specific gravity such as 1.265 or 265."
    if not sg.is_finite() or not SG_LOW <= sg <= SG_HIGH:
        return None, f"{sg} is outside {SG_LOW}–{SG_HIGH}. Check the hydrometer reading."
    return sg, None


def temp_problem(temp_c, fahrenheit=False, label="Electrolyte temperature"):
    """A message when an electrolyte temperature (°C) is outside what can be read, else None."""
    if temp_c is None:
        return None
    try:
        inside = TEMP_LOW_C <= Decimal(temp_c) <= TEMP_HIGH_C
    except (InvalidOperation, TypeError):
        inside = False
    if inside:
        return None
    if fahrenheit:
        return f"{label} must be between −22 and 158 °F."
    return f"{label} must be between −30 and 70 °C."


def volts_band(profile):
    """(low, high) volts one block of this profile can plausibly read."""
    low, high = chemistry.plausible_volts_range(profile.cells_per_block, profile.technology)
    return Decimal(str(round(low, 2))), Decimal(str(round(high, 2)))


def volts_problem(volts, profile, serial=""):
    """A message when a block voltage cannot belong to this profile's blocks, naming the profile it looks like."""
    if volts is None:
        return None
    low, high = volts_band(profile)
    if low <= volts <= high:
        return None
    cells = profile.cells_per_block
    message = (f"{volts} V is not plausible for a {cells}-cell block "
               f"({cells * 2} V nominal: expected {low:.2f}–{high:.2f} V).")
    looks_like = _cells_for_volts(volts, profile.technology)
    if looks_like and looks_like != cells:
        what = "block" if looks_like <= 6 else "battery"
        message += (f" It looks like a {looks_like * 2} V {what}: check that this is "
                    f"{serial or 'the battery you are reading'}, and read each block on its own.")
    else:
        message += " Check the meter, its leads and the decimal point."
    return message


# Cells in series of the usual blocks and batteries: 6 and 12 V blocks, 24-80 V traction trays (field notes).
COMMON_CELL_COUNTS = (3, 6, 12, 18, 24, 36, 40)


def _cells_for_volts(volts, technology):
    """How many cells in series a rested or charging voltage most likely spans (None if none fits)."""
    try:
        cells = round(float(volts) / 2.1)
    except (ValueError, OverflowError):
        return None
    if cells not in COMMON_CELL_COUNTS:
        return None
    low, high = chemistry.plausible_volts_range(cells, technology)
    return cells if low <= float(volts) <= high else None


# ---- Dates ----------------------------------------------------------------------------------------

@dataclass(frozen=True)
class DateWindow:
    earliest: dt.datetime
    latest: dt.datetime
    earliest_reason: str


def date_window(battery, now, future_minutes=None):
    """Earliest and latest moment a record of this battery may carry: its service start, and now + a few minutes."""
    minutes = BY_NAME["future_minutes"].default if future_minutes is None else future_minutes
    start = getattr(battery, "in_service_date", None)
    tz = battery.site.tzinfo
    if start:
        reason = f"before this battery entered service ({words.day(start)})"
    else:
        start = EARLIEST_WHEN_UNKNOWN
        reason = f"before {words.day(start)}"
    earliest = dt.datetime.combine(start, dt.time.min, tzinfo=tz)
    return DateWindow(earliest=earliest, latest=now + dt.timedelta(minutes=int(minutes)), earliest_reason=reason)


def date_problem(when, battery, now, label="Taken at", future_minutes=None, advice=None):
    """A message naming the field when `when` (aware) is ahead of now by more than the allowance or before service."""
    return window_problem(when, date_window(battery, now, future_minutes), now, label, advice)


def when_problem(when, limits, now, label="Taken at", advice=None):
    """As date_problem, from a battery's Limits (its settings already resolved): what the CSV import and the
    forms use, so a site's own `future_minutes` holds on every path."""
    window = DateWindow(earliest=limits.earliest, latest=now + dt.timedelta(minutes=limits.future_minutes),
                        earliest_reason=limits.earliest_reason)
    return window_problem(when, window, now, label, advice)


CLOCK_ADVICE = "Check the date and the tablet's clock."


def window_problem(when, window, now, label="Taken at", advice=None):
    """The one date rule: a message when `when` is outside the window, else None. `advice` ends the messages
    about an impossible or future date (the tablet's clock, or for a file, where the date came from)."""
    if when is None:
        return None
    advice = advice or CLOCK_ADVICE
    try:
        when_utc = when.astimezone(dt.timezone.utc)
    except (OverflowError, ValueError):
        return f"{label}: that date cannot be right. {advice}"
    if when_utc > window.latest:
        minutes = int((window.latest - now).total_seconds() // 60)
        return f"{label} is in the future (more than {minutes} minutes from now). {advice}"
    if when_utc < window.earliest:
        return f"{label} is {window.earliest_reason}. Check the date."
    return None


# ---- The situation ---------------------------------------------------------------------------------

JUST_EQUALIZED = "equalized"  # Inspection.Situation.JUST_EQUALIZED


def situations_for(profile):
    """The situations a reading of this profile may be taken in (Inspection.Situation values). Sealed blocks are
    not equalized by the crew (the maker's charger and instructions govern them), so "Just equalized" is not one."""
    from fleetcare.readings.models import Inspection  # the models module imports this one for SETTINGS

    values = tuple(Inspection.Situation.values)
    return values if profile.is_flooded else tuple(v for v in values if v != JUST_EQUALIZED)


def situation_problem(situation, situations):
    """A message for the situation box when `situation` is not among `situations` (from situations_for), else None."""
    if not situation or situation in situations:
        return None
    if situation == JUST_EQUALIZED:
        return SEALED_NOT_EQUALIZED
    return "Choose the situation the reading was taken in."


SEALED_NOT_EQUALIZED = ("A sealed battery is not equalized: choose just charged, rested, in use or before charge. "
                        "Charge it only as its maker says.")


# ---- The tray as a whole --------------------------------------------------------------------------

@dataclass(frozen=True)
class Limits:
    """Everything a single reading of one battery is judged by, as plain data (sent to the tablet as JSON)."""

    positions: int
    reads_by_block: bool
    sg_low: Decimal
    sg_high: Decimal
    temp_low_c: Decimal
    temp_high_c: Decimal
    fahrenheit: bool
    slip_above: Decimal
    slip_below: Decimal
    band_low: Decimal | None
    band_high: Decimal | None
    volts_low: Decimal | None
    volts_high: Decimal | None
    cells_per_block: int
    earliest: dt.datetime
    earliest_reason: str
    future_minutes: int
    slip_min_others: int = SLIP_MIN_OTHER_CELLS
    situations: tuple = ()

    def as_json(self):
        def num(value):
            return None if value is None else float(value)
        return {
            "positions": self.positions, "readsByBlock": self.reads_by_block, "sgLow": num(self.sg_low),
            "sgHigh": num(self.sg_high), "tempLowC": num(self.temp_low_c), "tempHighC": num(self.temp_high_c),
            "fahrenheit": self.fahrenheit, "slipAbove": num(self.slip_above), "slipBelow": num(self.slip_below),
            "bandLow": num(self.band_low), "bandHigh": num(self.band_high), "voltsLow": num(self.volts_low),
            "voltsHigh": num(self.volts_high), "cellsPerBlock": self.cells_per_block,
            "earliest": self.earliest.isoformat(), "earliestReason": self.earliest_reason,
            "futureMinutes": self.future_minutes, "slipMinOthers": self.slip_min_others,
            "situations": list(self.situations), "sealedNotEqualized": SEALED_NOT_EQUALIZED,
        }


def settings_for(battery, policies=None):
    """{name: Decimal} in force for `battery`: defaults, then EntryPolicy rows (profile < site < site and profile).

    Pass `policies` (a list of EntryPolicy rows loaded once) when judging many batteries, as the CSV import does.
    """
    from fleetcare.readings.models import EntryPolicy  # the models module imports this one for SETTINGS

    if policies is None:
        policies = list(EntryPolicy.objects.filter(
            models_q(site_id=battery.site_id) | models_q(site__isnull=True),
            models_q(profile_id=battery.profile_id) | models_q(profile__isnull=True)))
    values = policy_layers.resolve_values(SETTINGS, battery.site_id, battery.profile_id, policies)
    return {name: value.value for name, value in values.items()}


def limits_for(battery, now, values=None):
    """The limits for one battery: `values` ({name: Decimal}) or else the settings in force for it."""
    settings = {**setting_defaults(), **(settings_for(battery) if values is None else values)}
    profile = battery.profile
    margin = settings["plausible_band_margin_sg"]
    band_low = profile.discharged_sg - margin if profile.discharged_sg is not None else None
    band_high = profile.full_charge_sg + margin if profile.full_charge_sg is not None else None
    volts_low = volts_high = None
    if profile.reads_by_block:
        volts_low, volts_high = volts_band(profile)
    window = date_window(battery, now, settings["future_minutes"])
    return Limits(
        positions=profile.positions, reads_by_block=profile.reads_by_block, sg_low=SG_LOW, sg_high=SG_HIGH,
        temp_low_c=TEMP_LOW_C, temp_high_c=TEMP_HIGH_C, fahrenheit=battery.site.temp_unit == "F",
        slip_above=settings["slip_above_median_sg"], slip_below=settings["slip_below_median_sg"],
        band_low=band_low, band_high=band_high, volts_low=volts_low, volts_high=volts_high,
        cells_per_block=profile.cells_per_block, earliest=window.earliest, earliest_reason=window.earliest_reason,
        future_minutes=int(settings["future_minutes"]), situations=situations_for(profile),
    )


def _in_band(value, limits):
    return ((limits.band_low is None or value >= limits.band_low)
            and (limits.band_high is None or value <= limits.band_high))


ABOVE, BELOW, OVER_BAND, UNDER_BAND = "above", "below", "over_band", "under_band"


@dataclass(frozen=True)
class Suspect:
    """Why one cell is unlike the rest of the tray: its SG, which way, and what it was compared with
    (the median of the other cells, or the band's edge)."""

    sg: Decimal
    kind: str
    reference: Decimal

    @property
    def fact(self):
        """What is unusual, in the crew's words: "1.328 is 0.047 above the other cells (median 1.281)"."""
        if self.kind == ABOVE:
            return f"{self.sg} is {self.sg - self.reference:.3f} above the other cells (median {self.reference})"
        if self.kind == BELOW:
            return f"{self.sg} is {self.reference - self.sg:.3f} below the other cells (median {self.reference})"
        if self.kind == OVER_BAND:
            return f"{self.sg} is above what this battery reads when full (over {self.reference})"
        return f"{self.sg} is below what this battery reads when flat (under {self.reference})"

    @property
    def likely(self):
        """What usually causes it."""
        return {ABOVE: "a slip, a misread or acid added by mistake", BELOW: "a weak cell, or a slip"}.get(
            self.kind, "a misread, or a hydrometer to check")

    @property
    def ask(self):
        """What the entry screen asks for before the reading is saved."""
        if self.kind == ABOVE:
            return "A slip? Fix it, or confirm it."
        if self.kind == BELOW:
            return "Fix a slip, or confirm a weak cell."
        return "Fix it, or confirm it is what the hydrometer shows."


def _median_without(ordered, value):
    """The median of a sorted list once one occurrence of `value` is left out (as statistics.median would give)."""
    k = bisect.bisect_left(ordered, value)
    n = len(ordered) - 1

    def at(i):  # the i-th of the others
        return ordered[i if i < k else i + 1]

    return at(n // 2) if n % 2 else (at(n // 2 - 1) + at(n // 2)) / 2


def find_suspects(sg_by_position, limits):
    """{position: Suspect} for cells unlike the rest of the tray: likely typing slips, to be confirmed or fixed.

    A cell is suspect when it is more than `slip_above` above the median of the other cells, more than
    `slip_below` below it, or outside the profile's plausible band while the other cells are inside it
    (a whole tray outside the band is `tray_problem`'s business, not a slip). Medians need
    `slip_min_others` other cells; a pilot-cell reading is judged by the band alone. A plain function over
    values, sorted once, so the CSV import can run it on every reading of a large file.
    """
    filled = {p: v if type(v) is Decimal else Decimal(v) for p, v in sg_by_position.items() if v is not None}
    if not filled:
        return {}
    ordered = sorted(filled.values())
    lowest, highest = ordered[0], ordered[-1]
    if (highest - lowest <= min(limits.slip_above, limits.slip_below) and _in_band(lowest, limits)
            and _in_band(highest, limits)):
        return {}  # an even tray inside the band: no cell can be unlike the rest (the common case)
    suspects = {}
    for position, sg in sorted(filled.items()):
        middle = _median_without(ordered, sg).quantize(SG_PLACES) if len(ordered) > 1 else None
        if len(ordered) - 1 >= limits.slip_min_others:
            if sg - middle > limits.slip_above:
                suspects[position] = Suspect(sg, ABOVE, middle)
                continue
            if middle - sg > limits.slip_below:
                suspects[position] = Suspect(sg, BELOW, middle)
                continue
        if _in_band(sg, limits) or (middle is not None and not _in_band(middle, limits)):
            continue
        if limits.band_high is not None and sg > limits.band_high:
            suspects[position] = Suspect(sg, OVER_BAND, limits.band_high)
        else:
            suspects[position] = Suspect(sg, UNDER_BAND, limits.band_low)
    return suspects


def suspect_cells(sg_by_position, limits):
    """{position: why} for the entry screens: each suspect cell's fact and what to do about it."""
    return {p: f"{s.fact}. {s.ask}" for p, s in find_suspects(sg_by_position, limits).items()}


def tray_problem(sg_by_position, limits, serial=""):
    """A message when the cells as a whole read like another battery's (above this profile's full-charge band)."""
    filled = [Decimal(v) for v in sg_by_position.values() if v is not None]
    if len(filled) <= limits.slip_min_others or limits.band_high is None:
        return None
    middle = Decimal(median(filled)).quantize(SG_PLACES)
    if middle <= limits.band_high:
        return None
    return (f"The cells read about {middle}, more than {serial or 'this battery'} reads even when full "
            f"(up to {limits.band_high}): these look like another battery's readings. Check the serial on the "
            "tray, and the hydrometer.")


def unconfirmed_suspects(sg_by_position, confirmed, limits):
    """{position: why} for suspect cells that were not confirmed one by one."""
    return {p: why for p, why in suspect_cells(sg_by_position, limits).items() if p not in set(confirmed)}


def missing_cells_problem(filled_count, positions, reads_by_block, serial=""):
    """A message when an all-cell reading has as many boxes filled as another usual battery has cells, or None.

    Each empty box gets its own message anyway; this one says the reading may belong to another battery.
    """
    if filled_count == positions or filled_count not in COMMON_CELL_COUNTS:
        return None
    unit = "block" if reads_by_block else "cell"
    return (f"{filled_count} {unit}s filled in, but {serial or 'this battery'} has {positions}: "
            f"fill in every {unit}, and check that this is the right battery.")

"""When an equalizing charge has done its work, and when it must stop: SG (and charging volts) that no
longer rise beyond what the instrument can show, and electrolyte temperature against the maker's limits."""
from itertools import pairwise

from .measurement import SG_INSTRUMENT_RESOLUTION

LEVEL_READINGS = 3
MIN_GAP_MINUTES = 45  # "about an hour apart": a reading 45 minutes or more after the last one counted counts
STOP_TEMP_C = 45.0
HOT_TEMP_C = 55.0


def rises(readings):
    """Rise from each reading to the next, oldest first (one fewer than the readings)."""
    values = [float(v) for v in readings]
    return [later - earlier for earlier, later in pairwise(values)]


def has_levelled(readings, resolution, count=LEVEL_READINGS):
    """True when the last `count` readings (oldest first) show no rise beyond `resolution` from one to the next.

    Source: end an equalizing charge when SG (and the charging voltage, where read) stops rising over three
    consecutive readings about an hour apart, "no rise" meaning no more than the instrument can resolve
    (common practice, field notes "Measuring well"; Kimberly's text, section "Equalizing Charge", asks for
    three half-hourly readings, from memory).
    """
    if count < 2:
        raise ValueError("Levelling needs at least two readings to compare.")
    if resolution < 0:
        raise ValueError("The resolution cannot be negative.")
    last = list(readings)[-count:]
    if len(last) < count:
        return False
    return all(rise <= float(resolution) + 1e-9 for rise in rises(last))


def sg_has_levelled(readings_sg, resolution_sg=SG_INSTRUMENT_RESOLUTION, count=LEVEL_READINGS):
    """True when the last `count` SG readings show no rise beyond the hydrometer's resolution (default 0.005).

    Source: as has_levelled (common practice, field notes "Measuring well"; Kimberly, from memory).
    """
    return has_levelled(readings_sg, resolution_sg, count)


def volts_have_levelled(readings_volts, cells, resolution_volts_per_cell, count=LEVEL_READINGS):
    """True when the last `count` charging-voltage readings of a `cells`-cell battery show no rise beyond
    `resolution_volts_per_cell` × cells from one to the next.

    Source: as has_levelled: the charging voltage too stops rising at the end of an equalizing charge
    (common practice, field notes "Measuring well").
    """
    if cells < 1:
        raise ValueError("A battery has at least one cell.")
    return has_levelled(readings_volts, resolution_volts_per_cell * cells, count)


def spaced_readings(minutes, min_gap_minutes=MIN_GAP_MINUTES):
    """Indexes of the readings that count, oldest first: each at least `min_gap_minutes` after the last one kept.

    Readings too close together cannot show that SG has stopped rising (the rule asks for readings about an
    hour apart: common practice, field notes "Measuring well"; Kimberly, from memory).
    """
    kept = []
    for index, minute in enumerate(minutes):
        if not kept or minute - minutes[kept[-1]] >= min_gap_minutes:
            kept.append(index)
    return kept


def equalizing_temperature(temp_c, stop_temp_c=STOP_TEMP_C, hot_temp_c=HOT_TEMP_C):
    """"ok", "stop" (at or over the equalizing limit: stop, or do not start) or "hot" (over the absolute limit).

    Source: commonly 45 °C for equalizing and about 55 °C as the absolute maximum for traction cells (from
    memory, field notes "Measuring well"; the battery maker's data rules).
    """
    if temp_c is None:
        return "unknown"
    if float(temp_c) > float(hot_temp_c):
        return "hot"
    if float(temp_c) >= float(stop_temp_c):
        return "stop"
    return "ok"

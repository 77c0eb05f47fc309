"""When an equalizing charge has done its work: specific gravity that has stopped rising."""
from itertools import pairwise

LEVEL_TOLERANCE_SG = 0.001  # one point: what a hydrometer resolves (FleetCare default)
LEVEL_READINGS = 3
MIN_GAP_MINUTES = 30


def sg_has_levelled(readings_sg, tolerance=LEVEL_TOLERANCE_SG, count=LEVEL_READINGS):
    """True when the last `count` readings (oldest first) show no rise of more than `tolerance` from one to the next.

    Source: end an equalizing charge when SG stops rising over three consecutive readings taken half an
    hour to an hour apart (E. E. Kimberly's electrical engineering text, section "Equalizing Charge";
    from memory, via the field notes). The one-point tolerance is FleetCare's: a hydrometer reads to 0.001.
    """
    if count < 2:
        raise ValueError("Levelling needs at least two readings to compare.")
    if tolerance < 0:
        raise ValueError("The tolerance cannot be negative.")
    last = [float(sg) for sg in list(readings_sg)[-count:]]
    if len(last) < count:
        return False
    return all(later - earlier <= tolerance + 1e-12 for earlier, later in pairwise(last))


def spaced_readings(minutes, min_gap_minutes=MIN_GAP_MINUTES):
    """Indexes of the readings that count, oldest first: each at least `min_gap_minutes` after the last one kept.

    Readings closer together than half an hour cannot show that SG has stopped rising (the rule asks for
    readings half an hour to an hour apart: Kimberly, from memory, via the field notes).
    """
    kept = []
    for index, minute in enumerate(minutes):
        if not kept or minute - minutes[kept[-1]] >= min_gap_minutes:
            kept.append(index)
    return kept

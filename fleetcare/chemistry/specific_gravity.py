"""Specific gravity: temperature correction, state of charge, crew entry, per-battery stats."""

import re
from typing import NamedTuple, Sequence

_DECIMAL = re.compile(r"\d+\.\d*|\.\d+")
_POINTS = re.compile(r"\d+")


def corrected_sg(observed_sg, temp_c, reference_temp_c=25.0, coefficient_per_c=0.0007):
    """SG at the reference temperature: warm electrolyte reads low, so add coefficient x (temp - reference).

    Source: about 0.004 per 10 °F = 0.0007 per °C (common practice; US Army TM 5-1185-series tables, from memory).
    """
    return observed_sg + coefficient_per_c * (temp_c - reference_temp_c)


def soc_from_sg(sg, full_charge_sg, discharged_sg):
    """State of charge in percent, linear in SG between the discharged and full-charge values, clamped 0-100.

    Source: SG close to linear in state of charge between nameplate full and discharged values (common practice).
    """
    if full_charge_sg <= discharged_sg:
        raise ValueError("The full-charge SG must be higher than the discharged SG.")
    percent = 100.0 * (sg - discharged_sg) / (full_charge_sg - discharged_sg)
    return min(100.0, max(0.0, percent))


def parse_sg(text):
    """SG from what a crew types: "1.265", "1,265", "1265" or the points "265" all give 1.265; no range check.

    Source: crews read SG in points, 1.265 = "265" (common practice).
    """
    cleaned = str(text).strip().replace(",", ".")
    if not cleaned:
        raise ValueError("Enter a specific gravity, for example 1.265 or 265.")
    if _DECIMAL.fullmatch(cleaned):
        return float(cleaned)
    if not _POINTS.fullmatch(cleaned):
        raise ValueError(f"{text!r} is not a number. Enter a specific gravity such as 1.265 or 265.")
    if len(cleaned) == 3:
        return (1000 + int(cleaned)) / 1000
    if len(cleaned) == 4:
        return int(cleaned) / 1000
    raise ValueError(
        f"{text!r} is ambiguous. Enter the full reading (1.265) or three points (265)."
    )


class SgStats(NamedTuple):
    mean: float
    lowest: float
    highest: float
    spread: float
    lowest_index: int


def sg_stats(values: Sequence[float]) -> SgStats:
    """Mean, lowest, highest, spread and 0-based position of the lowest of a battery's corrected cell SGs.

    Source: plain statistics; the cell-to-cell spread is the weak-cell and equalizing signal (common practice).
    """
    values = list(values)
    if not values:
        raise ValueError("No SG readings to summarise.")
    lowest = min(values)
    highest = max(values)
    return SgStats(
        mean=sum(values) / len(values),
        lowest=lowest,
        highest=highest,
        spread=highest - lowest,
        lowest_index=values.index(lowest),
    )

"""Rested open-circuit voltage: SG <-> OCV, state of charge from voltage, plausible readings."""

from .specific_gravity import soc_from_sg

CELLS_PER_12V_BLOCK = 6
OCV_MINUS_SG_V = 0.84

# Rested 12 V block: (volts, state of charge %), ascending.
# Battery-council table as given in the field notes (from memory).
_FLOODED_12V = ((11.90, 0.0), (12.06, 25.0), (12.24, 50.0), (12.45, 75.0), (12.65, 100.0))
# Typical sealed (VRLA) chart, full at about 12.85 V (from memory; the maker's data rules).
_SEALED_12V = ((11.80, 0.0), (12.00, 25.0), (12.30, 50.0), (12.60, 75.0), (12.85, 100.0))
REST_VOLTS_12V = {"flooded": _FLOODED_12V, "agm": _SEALED_12V, "gel": _SEALED_12V}
TECHNOLOGIES = tuple(REST_VOLTS_12V)

# Per-cell volts a typed reading may plausibly show, rested or on charge (low, high). The low end is
# well under the 1.75 V/cell end of discharge so that a flat or shorted block can still be recorded;
# anything lower is a meter, lead or typing fault (or a dead block that should be taken out of use).
PLAUSIBLE_VOLTS_PER_CELL = {
    "flooded": (1.0, 2.65),
    "agm": (1.0, 2.50),
    "gel": (1.0, 2.50),
}


def ocv_per_cell_from_sg(sg):
    """Rested open-circuit volts per cell from electrolyte SG: OCV = SG + 0.84.

    Source: rule of thumb (common practice); within 0.025 V of Bode (1977) over SG 1.10-1.30, see tests.
    """
    return sg + OCV_MINUS_SG_V


def sg_from_ocv_per_cell(volts_per_cell):
    """Electrolyte SG implied by a rested per-cell voltage: SG = OCV - 0.84.

    Source: rule of thumb OCV = SG + 0.84 (common practice), inverted.
    """
    return volts_per_cell - OCV_MINUS_SG_V


def _check(cells, technology):
    if technology not in REST_VOLTS_12V:
        raise ValueError(f"Unknown technology {technology!r}; use one of {', '.join(TECHNOLOGIES)}.")
    if cells < 1:
        raise ValueError("A battery has at least one cell.")


def soc_from_ocv(volts, cells, technology, full_charge_sg=None, discharged_sg=None):
    """State of charge in percent from the rested voltage across `cells` cells, clamped 0-100.

    A flooded battery whose full-charge and discharged SG are known reads through its own acid: the SG
    implied by the volts per cell (OCV - 0.84), placed between those two SGs. Otherwise the fixed 12 V
    table, which belongs to a 1.265 full-charge battery, interpolated.
    Source: OCV = SG + 0.84 V per cell (common practice, checked against Bode 1977) and SG linear in state of charge (common practice); table: flooded battery-council 12 V 12.65/12.45/12.24/12.06/11.9 V (from memory); AGM, gel: from memory, maker data rules.
    """
    _check(cells, technology)
    if technology == "flooded" and full_charge_sg is not None and discharged_sg is not None:
        return soc_from_sg(sg_from_ocv_per_cell(volts / cells), full_charge_sg, discharged_sg)
    table = REST_VOLTS_12V[technology]
    volts_12v = volts / cells * CELLS_PER_12V_BLOCK
    if volts_12v <= table[0][0]:
        return table[0][1]
    for (v_low, soc_low), (v_high, soc_high) in zip(table, table[1:]):
        if volts_12v < v_high:
            return soc_low + (soc_high - soc_low) * (volts_12v - v_low) / (v_high - v_low)
    return table[-1][1]


def plausible_volts_range(cells, technology):
    """(low, high) volts a rested or charging reading across `cells` cells can plausibly show.

    Source: 1.0 V/cell floor (well below the 1.75 V/cell end of discharge, to record flat blocks); on charge up to about 2.65 flooded (equalizing), 2.50 sealed (common practice).
    """
    _check(cells, technology)
    low, high = PLAUSIBLE_VOLTS_PER_CELL[technology]
    return (low * cells, high * cells)

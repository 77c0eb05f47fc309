"""Water lost and hydrogen freed by overcharge, from Faraday's law."""

from scipy import constants

FARADAY_C_PER_MOL = constants.value("Faraday constant")
WATER_G_PER_MOL = 18.015
SECONDS_PER_HOUR = 3600.0
ELECTRONS_PER_WATER = 2  # 2 H2O -> 2 H2 + O2 takes 4 electrons
ELECTRONS_PER_H2 = 2
GAS_L_PER_MOL_0C = constants.R * constants.zero_Celsius / constants.atm * 1000.0


def _moles_of_electrons(ah):
    return ah * SECONDS_PER_HOUR / FARADAY_C_PER_MOL


def electrolysis_water_g(ah):
    """Grams of water split by `ah` ampere-hours of overcharge (about 0.336 g per Ah).

    Source: Faraday's law, Faraday constant from CODATA via scipy.constants, water 18.015 g/mol.
    """
    return _moles_of_electrons(ah) / ELECTRONS_PER_WATER * WATER_G_PER_MOL


def electrolysis_hydrogen_l(ah):
    """Litres of hydrogen at 0 °C and 101.325 kPa freed by `ah` ampere-hours of overcharge (about 0.418 L per Ah).

    Source: Faraday's law and the ideal-gas molar volume R*T/p, constants from CODATA via scipy.constants.
    """
    return _moles_of_electrons(ah) / ELECTRONS_PER_H2 * GAS_L_PER_MOL_0C

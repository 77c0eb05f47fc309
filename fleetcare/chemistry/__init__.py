"""Lead-acid battery science for FleetCare: plain functions, units in the names, no Django."""

from .electrolysis import electrolysis_hydrogen_l, electrolysis_water_g
from .measurement import below_median_of_others_sg, beyond_resolution, furthest_below_median_of_others_sg
from .open_circuit import (
    TECHNOLOGIES,
    ocv_per_cell_from_sg,
    plausible_volts_range,
    sg_from_ocv_per_cell,
    soc_from_ocv,
)
from .specific_gravity import SgStats, corrected_sg, parse_sg, sg_stats, soc_from_sg
from .units import c_to_f, f_to_c, litres_to_us_fl_oz, us_fl_oz_to_litres
from .ventilation import VENTILATION_SOURCE, natural_ventilation_opening_cm2, ventilation_airflow_m3h

__all__ = [
    "TECHNOLOGIES",
    "VENTILATION_SOURCE",
    "SgStats",
    "below_median_of_others_sg",
    "furthest_below_median_of_others_sg",
    "beyond_resolution",
    "c_to_f",
    "corrected_sg",
    "electrolysis_hydrogen_l",
    "electrolysis_water_g",
    "f_to_c",
    "litres_to_us_fl_oz",
    "natural_ventilation_opening_cm2",
    "ocv_per_cell_from_sg",
    "parse_sg",
    "plausible_volts_range",
    "sg_from_ocv_per_cell",
    "sg_stats",
    "soc_from_ocv",
    "soc_from_sg",
    "us_fl_oz_to_litres",
    "ventilation_airflow_m3h",
]

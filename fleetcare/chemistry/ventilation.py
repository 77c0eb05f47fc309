"""Charging-room ventilation for hydrogen."""

HYDROGEN_DILUTION_FACTOR = 24  # v: keeps hydrogen well under its 4 % lower explosive limit
HYDROGEN_M3_PER_AH = 0.42e-3  # q: per cell, gas at 0 °C
SAFETY_FACTOR = 5  # s
OPENING_CM2_PER_M3H = 28


def ventilation_airflow_m3h(cells, gassing_current_a_per_100ah, capacity_ah):
    """Airflow in m³/h to dilute charging hydrogen: Q = v*q*s*n*I_gas*C/100 (about 0.05*n*I_gas*C/100).

    Source: IEC/EN 62485-3 (formerly EN 50272-3) as reproduced in published guidance; check the edition in force.
    """
    if cells < 1:
        raise ValueError("A battery has at least one cell.")
    if gassing_current_a_per_100ah < 0 or capacity_ah < 0:
        raise ValueError("Gassing current and capacity cannot be negative.")
    per_cell_per_a = HYDROGEN_DILUTION_FACTOR * HYDROGEN_M3_PER_AH * SAFETY_FACTOR
    return per_cell_per_a * cells * gassing_current_a_per_100ah * capacity_ah / 100


def natural_ventilation_opening_cm2(airflow_m3h):
    """Free area in cm² of each of the inlet and the outlet for natural ventilation: A = 28*Q.

    Source: IEC/EN 62485-3 (formerly EN 50272-3) as reproduced in published guidance; check the edition in force.
    """
    if airflow_m3h < 0:
        raise ValueError("Airflow cannot be negative.")
    return OPENING_CM2_PER_M3H * airflow_m3h

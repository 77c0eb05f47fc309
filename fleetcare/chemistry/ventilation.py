"""Charging-room ventilation for hydrogen."""

# IEC/EN 62485-3 with the gas at 25 °C: Q = 0.055 m³/Ah × n × I_gas. The 0.055 combines the hydrogen
# evolved per Ah and cell (about 0.45 L at 25 °C), the dilution factor for hydrogen's 4 % lower explosive
# limit (24) and a safety factor (5). The superseded EN 50272-3:2002 form used 0.05 (gas at 0 °C, 0.42 L).
AIRFLOW_M3_PER_AH_PER_CELL = 0.055
SUPERSEDED_AIRFLOW_M3_PER_AH_PER_CELL = 0.05
OPENING_CM2_PER_M3H = 28

VENTILATION_SOURCE = (
    "IEC/EN 62485-3 (traction batteries), gas at 25 °C: Q = 0.055·n·I_gas·C/100 m³/h, and 28·Q cm² "
    "for each natural-ventilation opening (ZVEI information leaflet No. 14, May 2020, applying DIN EN "
    "62485-3); check the edition in force"
)


def ventilation_airflow_m3h(cells, gassing_current_a_per_100ah, capacity_ah):
    """Airflow in m³/h that dilutes charging hydrogen: Q = 0.055 × n × I_gas × C / 100.

    `gassing_current_a_per_100ah` is I_gas in A per 100 Ah of rated capacity, so I_gas × C / 100 is the
    gassing current in A.
    Source: IEC/EN 62485-3, gas at 25 °C (ZVEI information leaflet No. 14, May 2020, applying DIN EN
    62485-3); replaces the 0.05 factor of EN 50272-3:2002 (gas at 0 °C). Check the edition in force.
    """
    if cells < 1:
        raise ValueError("A battery has at least one cell.")
    if gassing_current_a_per_100ah < 0 or capacity_ah < 0:
        raise ValueError("Gassing current and capacity cannot be negative.")
    gassing_current_a = gassing_current_a_per_100ah * capacity_ah / 100
    return AIRFLOW_M3_PER_AH_PER_CELL * cells * gassing_current_a


def natural_ventilation_opening_cm2(airflow_m3h):
    """Free area in cm² of each of the inlet and the outlet for natural ventilation: A = 28 × Q.

    Source: IEC/EN 62485-3 (air velocity at least 0.1 m/s), as reproduced in published guidance (ZVEI
    information leaflet No. 14, May 2020); check the edition in force.
    """
    if airflow_m3h < 0:
        raise ValueError("Airflow cannot be negative.")
    return OPENING_CM2_PER_M3H * airflow_m3h

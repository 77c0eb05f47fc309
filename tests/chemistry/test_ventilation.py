import pytest

from fleetcare.chemistry import natural_ventilation_opening_cm2, ventilation_airflow_m3h
from fleetcare.chemistry.ventilation import SUPERSEDED_AIRFLOW_M3_PER_AH_PER_CELL


def test_it_sizes_airflow_for_a_48v_620ah_battery_on_iu_charge_at_the_current_factor():
    # IEC/EN 62485-3, gas at 25 °C (ZVEI information leaflet No. 14, May 2020): Q = 0.055 m³/Ah × n × I_gas.
    # I_gas 2 A per 100 Ah for vented cells on IU charging (2.4 V/cell limit) on 620 Ah = 12.4 A;
    # Q = 0.055 × 24 cells × 12.4 A = 16.368 m³/h.
    assert ventilation_airflow_m3h(24, 2, 620) == pytest.approx(16.368)


def test_an_80v_battery_of_40_cells_needs_its_worked_airflow():
    # The leaflet's n: 40 cells for an 80 V battery. 775 Ah on IU charging: I_gas = 2 × 775 / 100 = 15.5 A;
    # Q = 0.055 × 40 × 15.5 = 34.1 m³/h; natural ventilation needs 28 × 34.1 = 954.8 cm² inlet and outlet.
    airflow = ventilation_airflow_m3h(40, 2, 775)
    assert airflow == pytest.approx(34.1)
    assert natural_ventilation_opening_cm2(airflow) == pytest.approx(954.8)


def test_a_24v_battery_of_12_cells_on_a_taper_charger():
    # n = 12 for 24 V (leaflet), taper (W) charging up to I_gas 7 per 100 Ah (field notes' table), 375 Ah:
    # I_gas = 26.25 A; Q = 0.055 × 12 × 26.25 = 17.325 m³/h.
    assert ventilation_airflow_m3h(12, 7, 375) == pytest.approx(17.325)


def test_it_gives_about_10_percent_more_air_than_the_superseded_factor():
    # EN 50272-3:2002 gave 0.05 (hydrogen at 0 °C); the ratio 1.1 is close to 298.15 / 273.15 = 1.0915.
    superseded = SUPERSEDED_AIRFLOW_M3_PER_AH_PER_CELL * 24 * 2 * 620 / 100
    assert superseded == pytest.approx(14.88)
    assert ventilation_airflow_m3h(24, 2, 620) / superseded == pytest.approx(1.1)
    assert ventilation_airflow_m3h(24, 2, 620) / superseded == pytest.approx(298.15 / 273.15, rel=0.01)


def test_natural_ventilation_needs_28_cm2_per_m3h():
    # A = 28 × Q cm² for each of inlet and outlet (IEC/EN 62485-3 as reproduced in the field notes):
    # 28 × 16.368 = 458.304 cm².
    assert natural_ventilation_opening_cm2(16.368) == pytest.approx(458.304)


def test_equalizing_gas_raises_the_airflow_in_proportion():
    # I_gas up to 6 without a voltage limit vs 2 with one (field notes).
    assert ventilation_airflow_m3h(24, 6, 620) == pytest.approx(3 * ventilation_airflow_m3h(24, 2, 620))


def test_it_rejects_impossible_inputs():
    with pytest.raises(ValueError):
        ventilation_airflow_m3h(0, 2, 620)
    with pytest.raises(ValueError):
        ventilation_airflow_m3h(24, -1, 620)
    with pytest.raises(ValueError):
        ventilation_airflow_m3h(24, 2, -620)
    with pytest.raises(ValueError):
        natural_ventilation_opening_cm2(-1.0)

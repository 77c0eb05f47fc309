import pytest

from fleetcare.chemistry import natural_ventilation_opening_cm2, ventilation_airflow_m3h


def test_it_sizes_airflow_for_a_48v_620ah_battery_on_iu_charge():
    # Hand computed: v*q*s = 24 * 0.42e-3 * 5 = 0.0504; Q = 0.0504 * 24 cells * 2 A/100Ah * 620 Ah / 100
    # = 14.99904 m3/h (IEC/EN 62485-3 as reproduced in the field notes; I_gas 2 for vented cells, IU).
    assert ventilation_airflow_m3h(24, 2, 620) == pytest.approx(14.99904)


def test_it_matches_the_rounded_0_05_form_of_the_standard():
    # Q = 0.05 * n * I_gas * C / 100 (field notes); 0.0504 rounds to 0.05.
    assert ventilation_airflow_m3h(24, 2, 620) == pytest.approx(0.05 * 24 * 2 * 620 / 100, rel=0.01)


def test_the_zvei_25_c_form_differs_only_by_the_gas_temperature():
    # ZVEI leaflet No. 14 on DIN EN 62485-3: Q = 0.055 m3/Ah * n * I_gas (A), gas at 25 °C (field notes).
    # 2 A/100Ah on 620 Ah = 12.4 A; 0.055 * 24 * 12.4 = 16.368 m3/h.
    zvei_m3h = 0.055 * 24 * (2 * 620 / 100)
    assert zvei_m3h == pytest.approx(16.368)
    # Ratio 1.09127 vs 298.15/273.15 = 1.09152; 0.055 is itself rounded from 0.05496.
    assert zvei_m3h / ventilation_airflow_m3h(24, 2, 620) == pytest.approx(298.15 / 273.15, rel=0.001)


def test_natural_ventilation_needs_28_cm2_per_m3h():
    # A = 28 * Q cm2 for each of inlet and outlet (field notes): 28 * 14.99904 = 419.97 cm2.
    assert natural_ventilation_opening_cm2(14.99904) == pytest.approx(419.97312)


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

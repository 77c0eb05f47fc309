import pytest
from scipy import constants

from fleetcare.chemistry import electrolysis_hydrogen_l, electrolysis_water_g


def test_scipy_carries_the_exact_faraday_constant():
    # F = e * N_A, both exact since the 2019 SI (SI Brochure, 9th ed.; CODATA 2018).
    assert constants.value("Faraday constant") == pytest.approx(1.602176634e-19 * 6.02214076e23)
    assert constants.value("Faraday constant") == pytest.approx(96485.33212, abs=1e-5)


def test_one_ah_splits_about_a_third_of_a_gram_of_water():
    # Hand computed: 3600 C / 96485.33212 C/mol / 2 e- per H2O * 18.015 g/mol = 0.336082 g.
    assert electrolysis_water_g(1.0) == pytest.approx(0.336082, abs=1e-6)
    # Field notes: about 0.336 g per Ah (Faraday's law).
    assert electrolysis_water_g(1.0) == pytest.approx(0.336, abs=0.0005)


def test_one_ah_frees_about_0_42_litres_of_hydrogen_at_0_c():
    # Hand computed: 3600 / 96485.33212 / 2 mol H2 * 22.41397 L/mol (R*273.15 K/101325 Pa) = 0.418148 L.
    assert electrolysis_hydrogen_l(1.0) == pytest.approx(0.418148, abs=1e-6)
    # Field notes: about 0.42 L per Ah per cell at 0 °C.
    assert electrolysis_hydrogen_l(1.0) == pytest.approx(0.42, abs=0.005)


def test_hydrogen_at_25_c_is_about_0_456_litres_per_ah():
    # Field notes say "0.45 L at 25 °C"; the ideal gas gives 0.456 L, so that figure is rounded down.
    at_25_c = electrolysis_hydrogen_l(1.0) * (constants.zero_Celsius + 25) / constants.zero_Celsius
    assert at_25_c == pytest.approx(0.45642, abs=1e-5)


def test_gas_and_water_scale_with_ampere_hours():
    assert electrolysis_water_g(250.0) == pytest.approx(250 * electrolysis_water_g(1.0))
    assert electrolysis_hydrogen_l(0.0) == 0.0


def test_hydrogen_matches_the_ventilation_standard_q():
    # IEC/EN 62485-3 q = 0.42e-3 m3 per Ah (field notes), to its two figures.
    assert electrolysis_hydrogen_l(1.0) / 1000 == pytest.approx(0.42e-3, rel=0.005)

import pytest
from hypothesis import given
from hypothesis import strategies as st

from fleetcare.chemistry import c_to_f, f_to_c, litres_to_us_fl_oz, us_fl_oz_to_litres


def test_it_converts_the_reference_temperatures():
    # 77 °F = 25 °C (IEEE 450 reference) and 80 °F = 26.7 °C (field notes).
    assert f_to_c(77) == pytest.approx(25.0)
    assert f_to_c(80) == pytest.approx(26.667, abs=0.001)
    assert c_to_f(25) == pytest.approx(77.0)
    assert f_to_c(32) == 0.0


def test_a_us_fluid_ounce_is_exactly_29_5735295625_ml():
    # 1/128 of the 231 in3 US gallon, inch = 25.4 mm exactly (NIST Handbook 44 app. C, from memory).
    assert us_fl_oz_to_litres(1) == pytest.approx(0.0295735295625, rel=1e-12)
    assert us_fl_oz_to_litres(128) == pytest.approx(231 * 2.54**3 / 1000, rel=1e-12)
    assert litres_to_us_fl_oz(1) == pytest.approx(33.814, abs=0.001)


@given(st.floats(min_value=-60, max_value=150))
def test_temperature_round_trips(temp_c):
    assert f_to_c(c_to_f(temp_c)) == pytest.approx(temp_c, abs=1e-9)


@given(st.floats(min_value=0, max_value=10_000))
def test_volume_round_trips(litres):
    assert us_fl_oz_to_litres(litres_to_us_fl_oz(litres)) == pytest.approx(litres, rel=1e-12, abs=1e-12)

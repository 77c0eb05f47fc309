import pytest
from hypothesis import given
from hypothesis import strategies as st

from fleetcare.chemistry import corrected_sg, f_to_c, parse_sg, sg_stats, soc_from_sg

SG = st.floats(min_value=1.0, max_value=1.35)
TEMP_C = st.floats(min_value=-20, max_value=60)


def test_it_corrects_warm_electrolyte_upward():
    assert corrected_sg(1.250, temp_c=35.0) == pytest.approx(1.257)


def test_it_corrects_cold_electrolyte_downward():
    assert corrected_sg(1.250, temp_c=15.0) == pytest.approx(1.243)


def test_it_leaves_a_reading_at_the_reference_temperature_alone():
    assert corrected_sg(1.265, temp_c=25.0) == 1.265


def test_the_default_coefficient_is_the_0_004_per_10_f_convention():
    # 0.004 per 10 °F around 80 °F (US Army TM 5-1185-series tables, from memory) = 0.00072 per °C.
    assert 0.004 / (10 / 1.8) == pytest.approx(0.0007, rel=0.03)
    reading = corrected_sg(1.250, temp_c=f_to_c(90), reference_temp_c=f_to_c(80))
    assert reading == pytest.approx(1.254, abs=0.0002)


def test_it_reproduces_ieee_450_with_0_001_per_3_f():
    # IEEE Std 450: add 0.001 per 3 °F (1.67 °C) above 77 °F (from memory).
    coefficient = 0.001 / 1.6667
    assert corrected_sg(1.215, f_to_c(86), 25.0, coefficient) == pytest.approx(1.218, abs=1e-5)
    assert corrected_sg(1.215, f_to_c(68), 25.0, coefficient) == pytest.approx(1.212, abs=1e-5)


@given(SG, TEMP_C, TEMP_C)
def test_correction_round_trips(observed_sg, temp_c, reference_temp_c):
    at_reference = corrected_sg(observed_sg, temp_c, reference_temp_c)
    back = corrected_sg(at_reference, reference_temp_c, temp_c)
    assert back == pytest.approx(observed_sg, abs=1e-12)


def test_soc_is_linear_between_discharged_and_full():
    # Full 1.280, discharged 1.120: typical motive values (field notes, common practice).
    assert soc_from_sg(1.280, 1.280, 1.120) == 100.0
    assert soc_from_sg(1.200, 1.280, 1.120) == pytest.approx(50.0)
    assert soc_from_sg(1.120, 1.280, 1.120) == 0.0


def test_soc_is_clamped():
    assert soc_from_sg(1.300, 1.280, 1.120) == 100.0
    assert soc_from_sg(1.080, 1.280, 1.120) == 0.0


def test_soc_rejects_a_full_value_not_above_discharged():
    with pytest.raises(ValueError):
        soc_from_sg(1.200, 1.120, 1.280)


@given(SG, SG, st.floats(min_value=1.20, max_value=1.33), st.floats(min_value=1.05, max_value=1.19))
def test_soc_from_sg_is_monotone_and_clamped(sg_a, sg_b, full_charge_sg, discharged_sg):
    low, high = sorted((sg_a, sg_b))
    soc_low = soc_from_sg(low, full_charge_sg, discharged_sg)
    soc_high = soc_from_sg(high, full_charge_sg, discharged_sg)
    assert 0.0 <= soc_low <= soc_high <= 100.0


@pytest.mark.parametrize(
    "typed, sg",
    # Crews say points: 1.265 is "265" (field notes, common practice).
    [
        ("265", 1.265),
        ("1265", 1.265),
        ("1.265", 1.265),
        ("1280", 1.280),
        ("280", 1.280),
        (" 1.265 ", 1.265),
        ("1,265", 1.265),
        ("095", 1.095),
        ("1.3", 1.3),
    ],
)
def test_it_parses_what_crews_type(typed, sg):
    assert parse_sg(typed) == sg


@pytest.mark.parametrize("typed", ["95", "5", "12650", "1", ""])
def test_it_refuses_ambiguous_or_empty_entries(typed):
    with pytest.raises(ValueError):
        parse_sg(typed)


@pytest.mark.parametrize("typed", ["abc", "1.2.3", "-265", "nan", "1.265g", "1e3"])
def test_it_refuses_text_that_is_not_a_reading(typed):
    with pytest.raises(ValueError, match="not a number"):
        parse_sg(typed)


def test_it_does_not_range_check():
    assert parse_sg("2.5") == 2.5


@given(st.integers(min_value=0, max_value=999))
def test_points_and_full_readings_agree(points):
    assert parse_sg(f"{points:03d}") == parse_sg(f"1{points:03d}") == (1000 + points) / 1000


def test_sg_stats_finds_the_weak_cell():
    stats = sg_stats([1.280, 1.275, 1.250, 1.250, 1.285])
    assert stats.mean == pytest.approx(1.268)
    assert stats.lowest == 1.250
    assert stats.highest == 1.285
    assert stats.spread == pytest.approx(0.035)
    assert stats.lowest_index == 2


def test_sg_stats_refuses_no_readings():
    with pytest.raises(ValueError):
        sg_stats([])

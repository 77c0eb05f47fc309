"""Capacity tests: IEC 60254-1 temperature correction, the IEEE Std 450 factors, Peukert's law worked by hand."""
import pytest

from fleetcare.chemistry.capacity import (
    delivered_ah,
    first_to_end_voltage,
    iec_capacity_at_reference_ah,
    ieee_capacity_at_25c_ah,
    ieee_factor,
    peukert_hours,
    percent_of_rated,
)


def test_iec_60254_1_correction_to_30_degrees():
    # C30 = Cθ / (1 + λ(θ - 30)), λ = 0.006 per °C at C5 (IEC 60254-1, from memory; field notes).
    # 580 Ah delivered at 20 °C: 580 / (1 + 0.006 x -10) = 580 / 0.94 = 617.02 Ah
    assert iec_capacity_at_reference_ah(580, 20) == pytest.approx(617.0213, abs=1e-4)
    # at 35 °C: 650 / (1 + 0.006 x 5) = 650 / 1.03 = 631.07 Ah
    assert iec_capacity_at_reference_ah(650, 35) == pytest.approx(631.0680, abs=1e-4)
    # at the reference itself nothing changes
    assert iec_capacity_at_reference_ah(600, 30) == 600


def test_a_c5_test_at_20_degrees_reads_about_6_percent_low_against_30():
    # The figure: 1 / 0.94 = 1.0638, so an uncorrected test at 20 °C is 6 % low (of the corrected value)
    assert 1 - 580 / iec_capacity_at_reference_ah(580, 20) == pytest.approx(0.06)


def test_ieee_factors_around_25_degrees():
    # IEEE Std 485 Table 1 as used for IEEE Std 450 tests (from memory): 77 °F 1.000, 60 °F 1.110, 90 °F 0.940
    assert ieee_factor(25.0) == pytest.approx(1.000)
    assert ieee_factor((60 - 32) / 1.8) == pytest.approx(1.110)
    assert ieee_factor((90 - 32) / 1.8) == pytest.approx(0.940)
    # 72.5 °F is halfway between 70 °F (1.040) and 75 °F (1.011): 1.0255
    assert ieee_factor((72.5 - 32) / 1.8) == pytest.approx(1.0255)
    # 100 Ah delivered at 60 °F is 111 Ah at 25 °C
    assert ieee_capacity_at_25c_ah(100, (60 - 32) / 1.8) == pytest.approx(111.0)
    # clamped beyond the table
    assert ieee_factor(-20) == 1.520 and ieee_factor(60) == 0.860


def test_peukert_worked_by_hand():
    # 620 Ah at C5 (rated current 620 / 5 = 124 A), Peukert exponent k = 1.25, tested at 155 A:
    # t = H x (C / (I x H))^k = 5 x (620 / (155 x 5))^1.25 = 5 x 0.8^1.25
    # 0.8^1.25 = exp(1.25 x ln 0.8) = exp(1.25 x -0.2231436) = exp(-0.2789294) = 0.7565933
    # t = 5 x 0.7565933 = 3.7829664 h (a battery of full rated capacity runs 3 h 47 min at 155 A, not 4 h = 620 / 155)
    assert peukert_hours(620, 5, 155, 1.25) == pytest.approx(3.7829664, abs=1e-6)
    # the battery ran 3.40 h at 155 A with the electrolyte at 30 °C (no temperature correction):
    # 3.40 / 3.7829664 = 0.898766 -> 89.9 % of rated capacity (a plain Ah count would say 527 / 620 = 85.0 %)
    assert percent_of_rated(3.40, 620, 5, 155, 1.25) == pytest.approx(89.8766, abs=1e-3)
    assert delivered_ah(155, 3.40) / 620 == pytest.approx(0.85)


def test_at_the_rated_current_peukert_gives_the_rated_hours():
    assert peukert_hours(620, 5, 124, 1.25) == pytest.approx(5.0)
    assert percent_of_rated(4.0, 620, 5, 124, 1.3) == pytest.approx(80.0)


def test_the_cell_that_reached_the_end_voltage_first_is_named():
    # end voltage 1.70 V per cell at C5 (field notes, "Measuring well")
    assert first_to_end_voltage({1: 1.78, 2: 1.69, 3: 1.77, 4: 1.70}, 1.70) == [2, 4]
    assert first_to_end_voltage({1: 1.78, 2: 1.74, 3: 1.77}, 1.70) == [2]
    assert first_to_end_voltage({}, 1.70) == []


def test_it_refuses_impossible_inputs():
    with pytest.raises(ValueError):
        peukert_hours(620, 5, 0, 1.25)
    with pytest.raises(ValueError):
        peukert_hours(620, 5, 100, 0.9)
    with pytest.raises(ValueError):
        delivered_ah(-1, 2)
    with pytest.raises(ValueError):
        iec_capacity_at_reference_ah(600, -200)

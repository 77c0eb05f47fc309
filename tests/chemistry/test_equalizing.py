"""The end of an equalizing charge: SG (and charging volts) that no longer rise beyond what the instrument can show,
over three readings about an hour apart; and the temperature limits.

Rule from the field notes, "Measuring well": no rise beyond the instrument's resolution (float hydrometer 0.005)
over three consecutive readings about an hour apart (common practice; Kimberly's text, section "Equalizing
Charge", asks for three half-hourly readings, from memory). Stop at 45 °C, never over 55 °C (from memory).
"""
import pytest

from fleetcare.chemistry.equalizing import (
    equalizing_temperature,
    rises,
    sg_has_levelled,
    spaced_readings,
    volts_have_levelled,
)


def test_it_says_levelled_when_three_readings_rise_no_more_than_the_hydrometer_shows():
    # rises of 4 and 3 points are within a float hydrometer's ±0.005
    assert sg_has_levelled([1.262, 1.271, 1.280, 1.284, 1.287]) is True


def test_it_says_still_rising_when_a_reading_rose_more_than_the_resolution():
    # 2-3 points a reading is still within 0.005 per reading, but 6 points is not
    assert sg_has_levelled([1.270, 1.276, 1.280, 1.286]) is False


def test_a_digital_hydrometer_holds_the_charge_to_one_point():
    readings = [1.280, 1.282, 1.284]
    assert sg_has_levelled(readings, resolution_sg=0.005) is True
    assert sg_has_levelled(readings, resolution_sg=0.001) is False
    assert sg_has_levelled([1.284, 1.285, 1.285], resolution_sg=0.001) is True


def test_it_needs_three_readings_before_it_can_say_levelled():
    assert sg_has_levelled([1.290, 1.290]) is False
    assert sg_has_levelled([]) is False
    assert sg_has_levelled([1.280, 1.284, 1.284, 1.284], count=4) is True
    assert sg_has_levelled([1.270, 1.284, 1.284, 1.284], count=4) is False


def test_a_falling_reading_counts_as_not_rising():
    # electrolyte warms on equalizing; a corrected SG that dips a point has still stopped rising
    assert sg_has_levelled([1.286, 1.285, 1.285]) is True


def test_the_rise_per_reading_is_shown_oldest_first():
    assert rises([1.270, 1.276, 1.279]) == pytest.approx([0.006, 0.003])


def test_charging_volts_level_within_their_resolution_per_cell():
    # 24 cells, 0.01 V per cell: a rise of up to 0.24 V counts as no rise
    assert volts_have_levelled([62.1, 62.3, 62.4], 24, 0.01) is True
    assert volts_have_levelled([61.5, 62.0, 62.4], 24, 0.01) is False


def test_it_refuses_impossible_settings():
    with pytest.raises(ValueError):
        sg_has_levelled([1.28, 1.28], count=1)
    with pytest.raises(ValueError):
        sg_has_levelled([1.28, 1.28, 1.28], resolution_sg=-0.001)
    with pytest.raises(ValueError):
        volts_have_levelled([60, 60, 60], 0, 0.01)


def test_only_readings_far_enough_apart_count():
    assert spaced_readings([0, 10, 35, 50, 70, 125]) == [0, 3, 5]
    assert spaced_readings([]) == []
    assert spaced_readings([0, 20, 40], min_gap_minutes=20) == [0, 1, 2]


def test_temperature_says_stop_at_45_and_hot_over_55():
    assert equalizing_temperature(44.9) == "ok"
    assert equalizing_temperature(45.0) == "stop"
    assert equalizing_temperature(55.0) == "stop"
    assert equalizing_temperature(55.1) == "hot"
    assert equalizing_temperature(None) == "unknown"
    assert equalizing_temperature(42, stop_temp_c=40, hot_temp_c=50) == "stop"

"""The end of an equalizing charge: SG that stopped rising over three readings half an hour or more apart.

Rule from the field notes: E. E. Kimberly's text, section "Equalizing Charge", three half-hourly readings
(from memory). The one-point tolerance is FleetCare's own (hydrometer resolution).
"""
import pytest

from fleetcare.chemistry.equalizing import sg_has_levelled, spaced_readings


def test_it_says_levelled_when_three_readings_do_not_rise():
    assert sg_has_levelled([1.262, 1.271, 1.280, 1.285, 1.285, 1.286]) is True


def test_it_says_still_rising_when_the_last_reading_rose_two_points():
    assert sg_has_levelled([1.280, 1.285, 1.285, 1.287]) is False


def test_it_needs_three_readings_before_it_can_say_levelled():
    assert sg_has_levelled([1.290, 1.290]) is False
    assert sg_has_levelled([]) is False


def test_a_falling_reading_counts_as_not_rising():
    # electrolyte warms on equalizing; a corrected SG that dips a point has still stopped rising
    assert sg_has_levelled([1.286, 1.285, 1.285]) is True


def test_the_tolerance_and_count_are_settings():
    readings = [1.280, 1.282, 1.284]
    assert sg_has_levelled(readings, tolerance=0.002) is True
    assert sg_has_levelled(readings) is False
    assert sg_has_levelled([1.280, 1.284, 1.284, 1.284], count=4) is False
    assert sg_has_levelled([1.284, 1.284, 1.284, 1.284], count=4) is True


def test_it_refuses_a_rule_that_compares_nothing():
    with pytest.raises(ValueError):
        sg_has_levelled([1.28, 1.28], count=1)
    with pytest.raises(ValueError):
        sg_has_levelled([1.28, 1.28, 1.28], tolerance=-0.001)


def test_readings_closer_than_half_an_hour_do_not_count_separately():
    # minutes since the charge started: 0, 10 (too soon), 35, 50 (too soon), 70, 125
    assert spaced_readings([0, 10, 35, 50, 70, 125]) == [0, 2, 4, 5]
    assert spaced_readings([]) == []
    assert spaced_readings([0, 20, 40], min_gap_minutes=20) == [0, 1, 2]

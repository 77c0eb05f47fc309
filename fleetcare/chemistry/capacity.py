"""Capacity (discharge) tests: temperature correction, Peukert's law for a test at another rate, and the
cells that reached the end voltage first."""
from bisect import bisect_left

from .units import c_to_f

IEC_REFERENCE_TEMP_C = 30.0
IEC_COEFFICIENT_PER_C = 0.006  # λ for the 5-hour rate
IEEE_REFERENCE_TEMP_C = 25.0

# Electrolyte temperature (°F) -> factor K: the capacity a vented lead-acid cell gives at 25 °C (77 °F) over
# what it gives at that temperature. IEEE Std 485 Table 1, as used for capacity tests under IEEE Std 450
# (from memory).
IEEE_FACTORS_F = (
    (25, 1.520), (30, 1.430), (35, 1.350), (40, 1.300), (45, 1.250), (50, 1.190), (55, 1.150), (60, 1.110),
    (65, 1.080), (70, 1.040), (75, 1.011), (77, 1.000), (80, 0.980), (85, 0.960), (90, 0.940), (95, 0.930),
    (100, 0.920), (105, 0.910), (110, 0.890), (115, 0.880), (120, 0.870), (125, 0.860),
)


def delivered_ah(current_a, hours):
    """Ampere-hours delivered at a constant current for a time.

    Source: definition of the ampere-hour.
    """
    if current_a <= 0 or hours < 0:
        raise ValueError("The current must be positive and the time cannot be negative.")
    return current_a * hours


def iec_capacity_at_reference_ah(measured_ah, temp_c, reference_temp_c=IEC_REFERENCE_TEMP_C,
                                 coefficient_per_c=IEC_COEFFICIENT_PER_C):
    """Capacity corrected to the reference temperature: C_ref = C_θ / (1 + λ(θ − θ_ref)).

    `temp_c` is the electrolyte temperature at the start of the test.
    Source: IEC 60254-1 (traction batteries), 30 °C reference, λ = 0.006 per °C at the 5-hour rate (from memory).
    """
    divisor = 1 + coefficient_per_c * (temp_c - reference_temp_c)
    if divisor <= 0:
        raise ValueError("That temperature is outside what the correction can be used for.")
    return measured_ah / divisor


def ieee_factor(temp_c):
    """Factor K (capacity at 25 °C over capacity at `temp_c`), interpolated in the table, clamped at its ends.

    Source: IEEE Std 485 Table 1 temperature correction factors, used for IEEE Std 450 capacity tests of
    vented stationary cells (from memory).
    """
    temp_f = c_to_f(temp_c)
    points = [f for f, _ in IEEE_FACTORS_F]
    if temp_f <= points[0]:
        return IEEE_FACTORS_F[0][1]
    if temp_f >= points[-1]:
        return IEEE_FACTORS_F[-1][1]
    i = bisect_left(points, temp_f)
    (f_low, k_low), (f_high, k_high) = IEEE_FACTORS_F[i - 1], IEEE_FACTORS_F[i]
    if temp_f == f_high:
        return k_high
    return k_low + (k_high - k_low) * (temp_f - f_low) / (f_high - f_low)


def ieee_capacity_at_25c_ah(measured_ah, temp_c):
    """Capacity corrected to 25 °C: C_25 = C_θ × K(θ).

    Source: IEEE Std 450 practice with the IEEE Std 485 Table 1 factors (from memory).
    """
    return measured_ah * ieee_factor(temp_c)


def peukert_hours(capacity_ah, rated_hours, current_a, exponent):
    """Hours a battery of rated capacity `capacity_ah` at the `rated_hours` rate runs at `current_a`:
    t = H × (C / (I × H))^k.

    Source: Peukert's law in its rated-capacity form; k about 1.1-1.3 for lead-acid (common practice).
    """
    if capacity_ah <= 0 or rated_hours <= 0 or current_a <= 0:
        raise ValueError("Capacity, rated hours and current must be positive.")
    if exponent < 1:
        raise ValueError("Peukert's exponent is at least 1.")
    return rated_hours * (capacity_ah / (current_a * rated_hours)) ** exponent


def percent_of_rated(corrected_hours, capacity_ah, rated_hours, current_a, exponent):
    """A test's result as a percentage of rated capacity: the time it ran (corrected for temperature) over the
    time a battery of full rated capacity runs at that current (Peukert's law; at the rated current that time
    is the rated hours).

    Source: Peukert's law (common practice); IEEE Std 450 states test results as actual over rated time (from memory).
    """
    return 100.0 * corrected_hours / peukert_hours(capacity_ah, rated_hours, current_a, exponent)


def first_to_end_voltage(volts_by_position, end_volts_per_cell):
    """Positions of the cells at or under the end voltage near the end of the test; if none has reached it yet,
    the lowest cell(s). The cell that reaches the end voltage first is the weak one.

    Source: common practice (field notes, "Measuring well").
    """
    if not volts_by_position:
        return []
    under = sorted(p for p, v in volts_by_position.items() if v <= end_volts_per_cell + 1e-9)
    if under:
        return under
    lowest = min(volts_by_position.values())
    return sorted(p for p, v in volts_by_position.items() if v <= lowest + 1e-9)


IEC_60254_1 = "iec_60254_1"
IEEE_450 = "ieee_450"


def discharge_test_result(*, capacity_ah, rated_hours, exponent, start_temp_c, method, current_a=None, hours=None,
                measured_ah=None, reference_temp_c=IEC_REFERENCE_TEMP_C):
    """A discharge test worked out: {current_a, hours, delivered_ah, corrected_ah, reference_temp_c,
    percent_of_rated, at_rated_rate}. Without `current_a` the test ran at the rated current C/H; give the time
    to the end voltage (`hours`) or the Ah delivered (`measured_ah`).

    Source: IEC 60254-1 (traction, from memory) or IEEE Std 450 with IEEE Std 485 factors (stationary, from
    memory) for temperature; Peukert's law for a test at another rate (common practice).
    """
    rated_current = capacity_ah / rated_hours
    current = rated_current if current_a is None else current_a
    if hours is None and measured_ah is None:
        raise ValueError("Give the time to the end voltage or the Ah delivered.")
    if hours is None:
        hours = measured_ah / current
    delivered = delivered_ah(current, hours)
    if method == IEEE_450:
        corrected, reference = ieee_capacity_at_25c_ah(delivered, start_temp_c), IEEE_REFERENCE_TEMP_C
    else:
        corrected = iec_capacity_at_reference_ah(delivered, start_temp_c, reference_temp_c)
        reference = reference_temp_c
    percent = percent_of_rated(corrected / current, capacity_ah, rated_hours, current, exponent)
    return {
        "current_a": current, "hours": hours, "delivered_ah": delivered, "corrected_ah": corrected,
        "reference_temp_c": reference, "percent_of_rated": percent,
        "at_rated_rate": abs(current - rated_current) <= 0.005 * rated_current,
    }

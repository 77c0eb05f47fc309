"""Writes for the budget: capacity tests and the assumptions, each stored whole or not at all."""
from decimal import ROUND_HALF_UP, Decimal

from django.db import transaction

from fleetcare.budget.models import CapacityTest, ProfileBudget
from fleetcare.chemistry import capacity


def _q(value, places):
    return Decimal(str(value)).quantize(Decimal(places), rounding=ROUND_HALF_UP)


def record_capacity_test(*, battery, user, tested_on, start_temp_c, end_volts_per_cell, current_a=None,
                         hours_to_end=None, delivered_ah=None, cell_volts=None, notes=""):
    """Store a discharge test with its result worked out by fleetcare.chemistry: capacity corrected to the
    profile's reference temperature, as a percentage of rating (through Peukert's law when the current was not
    the rated one), and the cells that reached the end voltage first. No `current_a`: the rated current."""
    profile = battery.profile
    method = profile.capacity_correction
    exponent = float(profile.peukert_exponent)
    result = capacity.discharge_test_result(
        capacity_ah=float(profile.capacity_ah), rated_hours=profile.capacity_hour_rate, exponent=exponent,
        start_temp_c=float(start_temp_c), method=method,
        current_a=None if current_a is None else float(current_a),
        hours=None if hours_to_end is None else float(hours_to_end),
        measured_ah=None if delivered_ah is None else float(delivered_ah),
        reference_temp_c=float(profile.capacity_reference_temp_c),
    )
    cell_volts = {int(p): float(v) for p, v in (cell_volts or {}).items()}
    with transaction.atomic():
        return CapacityTest.objects.create(
            battery=battery, tested_by=user, tested_on=tested_on, notes=notes, corrected=True,
            rate=CapacityTest.Rate.RATED if result["at_rated_rate"] else CapacityTest.Rate.CURRENT,
            current_a=_q(result["current_a"], "0.1"), hours_to_end=_q(result["hours"], "0.01"),
            delivered_ah=_q(result["delivered_ah"], "0.1"), end_volts_per_cell=end_volts_per_cell,
            start_temp_c=start_temp_c, cell_volts={str(p): v for p, v in sorted(cell_volts.items())},
            corrected_ah=_q(result["corrected_ah"], "0.1"), reference_temp_c=_q(result["reference_temp_c"], "0.1"),
            method=method, peukert_exponent=profile.peukert_exponent,
            percent_of_rated=_q(result["percent_of_rated"], "0.1"),
            first_cells=capacity.first_to_end_voltage(cell_volts, float(end_volts_per_cell)),
        )


def save_assumptions(*, form, profile_settings, user):
    """Save the assumptions and each profile's budget settings ({profile: {field: value or None}}).

    A profile whose settings are all blank keeps no row.
    """
    with transaction.atomic():
        assumptions = form.save(commit=False)
        assumptions.pk = 1
        assumptions.updated_by = user
        assumptions.save()
        for profile, values in profile_settings.items():
            if all(v is None for v in values.values()):
                ProfileBudget.objects.filter(profile=profile).delete()
            else:
                ProfileBudget.objects.update_or_create(profile=profile, defaults=values)
    return assumptions


def record_rated_capacity_test(*, battery, user, tested_on, percent_of_rated, notes=""):
    """A test at the rated current and the profile's reference temperature that ran `percent_of_rated` % of
    the rated hours (the demo data's way of writing down a test by its result)."""
    profile = battery.profile
    reference = Decimal("25.0") if profile.capacity_correction == "ieee_450" else profile.capacity_reference_temp_c
    hours = Decimal(profile.capacity_hour_rate) * Decimal(str(percent_of_rated)) / 100
    return record_capacity_test(battery=battery, user=user, tested_on=tested_on, start_temp_c=reference,
                                end_volts_per_cell=profile.capacity_end_volts_per_cell,
                                hours_to_end=hours.quantize(Decimal("0.0001")), notes=notes)

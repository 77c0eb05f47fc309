"""Writes for the budget: capacity tests and the assumptions, each stored whole or not at all."""
from django.db import transaction

from fleetcare.budget.models import CapacityTest, ProfileBudget


def record_capacity_test(*, battery, user, tested_on, percent_of_rated, notes=""):
    with transaction.atomic():
        return CapacityTest.objects.create(
            battery=battery, tested_by=user, tested_on=tested_on, percent_of_rated=percent_of_rated, notes=notes,
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

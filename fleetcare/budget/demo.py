"""Budget data for the invented demo fleet: assumptions and a few capacity tests. Invented figures.

Runs after fleetcare.demo.fleet.load(); adds nothing if the assumptions row or any demo capacity
test is already there, so `manage.py demo` may be run again freely.
"""
from datetime import timedelta
from decimal import Decimal

from django.db import transaction
from django.utils import timezone

from fleetcare.budget import services
from fleetcare.budget.models import BudgetAssumptions, CapacityTest, ProfileBudget
from fleetcare.fleet.models import Battery, BatteryProfile

# serial: [(days before today, % of rated)], oldest first
DEMO_TESTS = {
    "HRW-B01": [(560, 89.0), (270, 84.5), (30, 78.5)],  # the old tray: now under the 80 % floor
    "PSD-B03": [(300, 98.0), (170, 95.0), (20, 91.5)],  # the heavy water user: falling fast
    "HRW-B10": [(290, 97.5), (150, 94.0), (25, 91.0)],  # the truck whose night shift runs it flat
    "HRW-P02": [(60, 94.0)],  # one test: no trend yet
}


def load(today=None):
    """Add the demo budget data once. Returns False if it was already there (or the demo fleet is not)."""
    today = today or timezone.localdate()
    batteries = {b.serial: b for b in Battery.objects.filter(serial__in=DEMO_TESTS)}
    if not batteries or BudgetAssumptions.objects.exists():
        return False
    if CapacityTest.objects.filter(battery__in=batteries.values()).exists():
        return False
    with transaction.atomic():
        BudgetAssumptions.objects.create(
            pk=1, currency="GBP", installation_cost=Decimal("450"), scrap_credit_per_kg=Decimal("0.600"),
            escalation_percent=Decimal("3.5"), fiscal_year_start_month=4, cell_cost=Decimal("380"),
        )
        for profile in BatteryProfile.objects.filter(technology__in=("agm", "gel"), application="mobility"):
            # chairs are charged every night after a light day's use; a pair is swapped on site in minutes
            ProfileBudget.objects.get_or_create(profile=profile, defaults={
                "typical_depth_percent": Decimal("40"), "installation_cost": Decimal("35"),
            })
        for serial, tests in DEMO_TESTS.items():
            for days, pct in tests if serial in batteries else ():
                services.record_rated_capacity_test(battery=batteries[serial], user=None,
                                                    tested_on=today - timedelta(days=days), percent_of_rated=pct,
                                                    notes="Demo: discharge test at the rated rate")
    return True

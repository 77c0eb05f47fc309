import datetime as dt
from decimal import Decimal

from django.utils import timezone

from fleetcare.budget import selectors
from fleetcare.budget.models import CapacityTest, ProfileBudget
from fleetcare.budget.services import record_rated_capacity_test
from fleetcare.care.models import Finding
from fleetcare.fleet.models import Battery
from fleetcare.readings.models import Inspection
from fleetcare.readings.services import remove_inspection
from tests.budget.conftest import post_charge_readings

QUERIES = 5  # batteries with their kept state, capacity tests, post-charge readings, depth before charge, findings


def add_batteries(site, profile, user, count, start):
    today = timezone.localdate()
    for n in range(start, start + count):
        b = Battery.objects.create(serial=f"Q-{n:03d}", profile=profile, site=site,
                                   in_service_date=today - dt.timedelta(days=300 + n))
        record_rated_capacity_test(battery=b, user=user, tested_on=today - dt.timedelta(days=100), percent_of_rated=95)
        record_rated_capacity_test(battery=b, user=user, tested_on=today - dt.timedelta(days=10), percent_of_rated=93)
        # an old bare percentage: shown as uncorrected, never used by the budget
        CapacityTest.objects.create(battery=b, tested_on=today - dt.timedelta(days=5), percent_of_rated=Decimal("40"))
        post_charge_readings(b, user, (9, 2))


def test_it_reads_the_facts_in_a_fixed_number_of_queries(site, traction_profile, supervisor,
                                                         django_assert_num_queries):
    ProfileBudget.objects.create(profile=traction_profile, typical_depth_percent=Decimal("60"))
    today = timezone.localdate()
    add_batteries(site, traction_profile, supervisor, 2, 0)
    with django_assert_num_queries(QUERIES):
        small = selectors.battery_facts(Battery.objects.all(), today)
    add_batteries(site, traction_profile, supervisor, 8, 2)
    with django_assert_num_queries(QUERIES):
        large = selectors.battery_facts(Battery.objects.all(), today)
    assert (len(small), len(large)) == (2, 10)
    assert large[0].capacity_tests == ((today - dt.timedelta(days=100), 95.0), (today - dt.timedelta(days=10), 93.0))
    assert len(large[0].post_charge) == 2 and large[0].logged_charges == 2
    assert large[0].typical_depth_percent == 60.0


def test_a_weak_cell_finding_offers_the_cell_option(battery, supervisor):
    now = timezone.now()
    Finding.objects.create(battery=battery, kind="weak_cell", positions=[5], persistent=True, opened_at=now,
                           last_seen_at=now)
    Finding.objects.create(battery=battery, kind="high_spread", positions=[5, 6, 7], opened_at=now, last_seen_at=now)
    budget, _ = selectors.replacement_budget(Battery.objects.all())
    facts = budget.forecasts[0].facts
    assert facts.weak_cells == (5,)
    assert budget.forecasts[0].cell_option == (5,)
    assert budget.lines[0].label == "Replace cell 5"


def test_a_cleared_finding_is_not_counted(battery):
    now = timezone.now()
    Finding.objects.create(battery=battery, kind="weak_cell", positions=[5], state="cleared", opened_at=now,
                           last_seen_at=now, cleared_at=now)
    budget, _ = selectors.replacement_budget(Battery.objects.all())
    assert budget.forecasts[0].cell_option == () and budget.forecasts[0].facts.weak_cells == ()


def test_the_logged_charges_and_the_first_follow_backfilled_and_removed_readings(battery, other_battery, supervisor):
    today = timezone.localdate()
    post_charge_readings(battery, supervisor, (9, 2))
    post_charge_readings(battery, supervisor, (30, 40))  # typed in late, from the paper log
    oldest = Inspection.objects.get(battery=battery, taken_at__lt=timezone.now() - dt.timedelta(days=35))
    remove_inspection(oldest, user=supervisor, reason="another battery's sheet")
    facts = {f.battery_id: f for f in selectors.battery_facts(Battery.objects.all(), today)}
    thirty_days_ago = Inspection.objects.current().filter(battery=battery).earliest("taken_at").taken_at
    assert facts[battery.pk].logged_charges == 3
    assert facts[battery.pk].first_logged_charge == thirty_days_ago.date()
    assert (facts[other_battery.pk].logged_charges, facts[other_battery.pk].first_logged_charge) == (0, None)

import datetime as dt
import random
from decimal import Decimal
from zoneinfo import ZoneInfo

import pytest
from django.utils import timezone

from fleetcare.budget import forecast, selectors
from fleetcare.budget.models import CapacityTest, ProfileBudget
from fleetcare.budget.services import record_rated_capacity_test
from fleetcare.care.models import Finding
from fleetcare.fleet.models import Battery
from fleetcare.readings.models import Inspection
from fleetcare.readings.services import CellEntry, correct_inspection, remove_inspection
from tests.budget.conftest import post_charge_readings
from tests.dashboard.conftest import read

QUERIES = 9  # batteries with their kept state, their profiles, their sites, capacity tests, post-charge readings,
# findings, and for the depth before charge: the kept months, the sites' clocks and the days before the first whole month


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


def test_the_depth_before_charge_is_the_mean_over_the_window_from_the_sites_midnight(site, traction_profile, supervisor):
    """The kept monthly totals plus the days before the window's first whole month give exactly the mean of the
    readings since the site's midnight a window ago: checked against that mean taken straight from the readings,
    on a clock far from UTC, with readings on both sides of the window's first midnight, one removed and one
    corrected."""
    site.timezone = "Asia/Tokyo"
    site.save()
    tokyo = ZoneInfo("Asia/Tokyo")
    battery = Battery.objects.create(serial="DEPTH-1", profile=traction_profile, site=site,
                                     in_service_date=dt.date(2024, 1, 1))
    rules = forecast.Rules()
    today = dt.date(2026, 11, 20)
    first_day = today - dt.timedelta(days=rules.trend_window_days)
    rng = random.Random(11)
    moments = [dt.datetime.combine(first_day, dt.time(0, 30), tokyo), dt.datetime.combine(first_day, dt.time(0, 0), tokyo)
               - dt.timedelta(minutes=30)]
    moments += [dt.datetime.combine(today - dt.timedelta(days=d), dt.time(rng.randint(0, 23)), tokyo)
                for d in range(0, 420, 4)]
    stored = [read(battery, supervisor, when, "before_charge", sg=f"1.{rng.randint(150, 270)}", scope="pilot")
              for when in moments]
    remove_inspection(stored[5], user=supervisor, reason="wrong battery")
    correct_inspection(stored[9], user=supervisor, reason="misread", cells=[CellEntry(position=battery.pilot_cell,
                       sg=Decimal("1.160"))], temp_c=Decimal(25), taken_at=stored[9].taken_at,
                       situation="before_charge", scope="pilot")

    window = Inspection.objects.current().filter(
        battery=battery, situation="before_charge", soc_percent__isnull=False,
        taken_at__gte=dt.datetime.combine(first_day, dt.time.min, tokyo))
    socs = [float(soc) for soc in window.values_list("soc_percent", flat=True)]
    assert len(socs) > 50 and window.filter(taken_at__lt=dt.datetime.combine(first_day, dt.time(1), tokyo)).count() == 1
    depths = selectors._measured_depths(Battery.objects.all(), today, rules)
    assert depths[battery.pk] == pytest.approx(100 - sum(socs) / len(socs), abs=1e-9)


def test_the_post_charge_points_are_the_readings_own_figures(site, traction_profile, supervisor):
    """The database casts the figures to floats and takes the UTC day: the same values float() and .date() give."""
    add_batteries(site, traction_profile, supervisor, 3, 2)
    facts = selectors.battery_facts(Battery.objects.all(), timezone.localdate())
    for fact in facts:
        readings = (Inspection.objects.current().post_charge().filter(battery_id=fact.battery_id, scope="all")
                    .order_by("taken_at"))
        expected = [(r.taken_at.astimezone(dt.UTC).date(), float(r.sg_mean), float(r.sg_spread), r.lowest_position,
                     float(r.sg_min)) for r in readings]
        assert [tuple(p) for p in fact.post_charge] == expected and expected
        assert all(type(p[i]) is float for p in fact.post_charge for i in (1, 2, 4))  # sg_mean, sg_spread, sg_min

from collections import Counter

import pytest
from django.core.management import call_command
from django.urls import reverse

from fleetcare.budget.models import BudgetAssumptions, CapacityTest


@pytest.fixture
def demo(db):
    call_command("demo", "--no-serve", stdout=None)


def test_the_demo_budget_spreads_over_the_coming_quarters(client, demo):
    call_command("demo", "--no-serve")  # a second run adds no second set of tests
    assert CapacityTest.objects.count() == 10 and BudgetAssumptions.objects.count() == 1
    client.login(username="demo-manager", password="try-fleetcare-2026")
    response = client.get(reverse("budget:home"))
    assert response.status_code == 200
    budget = response.context["budget"]
    per_quarter = Counter(line.quarter for line in budget.lines if line.budget_date < budget.end)
    first_year = [q.label for q in budget.quarter_totals[:5]]
    assert sum(1 for q in first_year if per_quarter[q]) >= 4  # something falls due in most of the next quarters
    assert max(per_quarter.values()) <= budget.count // 4  # no quarter holds the whole fleet
    decided = {f.facts.serial: f.decided_by.kind for f in budget.forecasts}
    assert decided["HRW-B01"] == "capacity" and decided["PSD-B03"] == "capacity"
    assert decided["ELM-P12"] == "age"  # a six-month-old chair pair runs to its two-year design life
    assert client.get(reverse("budget:export_xlsx")).status_code == 200

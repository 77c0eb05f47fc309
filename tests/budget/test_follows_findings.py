"""The budget counts a cell as failing only when the findings do, and meets a low mean SG with "equalize and test".

Field notes (common practice): spread after a charge calls for an equalizing charge; a cell still 0.030–0.050
below the others after equalizing is failing. The findings hold that rule; the budget follows them.
"""
import datetime as dt

import pytest
from django.utils import timezone

from fleetcare.budget import forecast, selectors
from fleetcare.care import wording
from fleetcare.care.models import Finding
from fleetcare.fleet.models import Battery
from tests.care.helpers import detect, inspect, sgs, water


@pytest.fixture
def now():
    return timezone.now().replace(microsecond=0)


def budget_for(battery):
    budget, _ = selectors.replacement_budget(Battery.objects.filter(pk=battery.pk))
    return budget.forecasts[0], budget.lines


def test_a_cell_low_once_after_an_ordinary_charge_is_not_budgeted(battery, crew, now):
    water(battery, crew, now - dt.timedelta(days=1), 1200)
    inspect(battery, crew, now - dt.timedelta(hours=2), cells=sgs(low={7: "1.240"}))
    detect(battery, now)
    weak = Finding.objects.get(battery=battery, kind="weak_cell")
    assert weak.positions == [7] and weak.failing_positions == []  # weak: equalize first
    result, lines = budget_for(battery)
    assert result.cell_option == () and all(ln.kind != forecast.CELL_LINE for ln in lines)
    assert all(e.kind != forecast.CELLS for e in result.evidence)


def test_the_same_cell_still_low_after_equalizing_is_budgeted(battery, crew, now):
    water(battery, crew, now - dt.timedelta(days=1), 1200)
    inspect(battery, crew, now - dt.timedelta(days=2), cells=sgs(low={7: "1.240"}))
    inspect(battery, crew, now - dt.timedelta(hours=2), situation="equalized", cells=sgs(low={7: "1.225"}))
    detect(battery, now)
    weak = Finding.objects.get(battery=battery, kind="weak_cell", state="open")
    assert weak.failing_positions == [7] and weak.failing_because == wording.FAILING_AFTER_EQUALIZING
    result, lines = budget_for(battery)
    assert result.cell_option == (7,)
    cells = next(ln for ln in lines if ln.kind == forecast.CELL_LINE)
    assert cells.label == "Replace cell 7"
    # the forecast names the rule in the finding's words
    assert wording.FAILING_AFTER_EQUALIZING in cells.decided_by.detail
    assert wording.FAILING_AFTER_EQUALIZING in weak.summary


def test_a_low_sg_battery_gets_equalize_and_test_before_any_replacement(battery, crew, now):
    water(battery, crew, now - dt.timedelta(days=1), 1200)
    for days in (21, 14, 7):  # every cell 1.255: 0.035 short of the profile's 1.290 full charge
        inspect(battery, crew, now - dt.timedelta(days=days), cells=sgs(value="1.255"))
    detect(battery, now)
    assert Finding.objects.filter(battery=battery, kind="sulfation", state="open").exists()
    result, lines = budget_for(battery)
    sg = next(e for e in result.evidence if e.kind == forecast.SG_MEAN)
    assert sg.action == forecast.EQUALIZE_AND_TEST and not sg.dated
    assert wording.EQUALIZE_AND_TEST[1:] in sg.action
    assert not result.overdue and result.decided_by.kind in forecast.LIFE_EXPECTANCY
    assert lines and lines[0].budget_date > timezone.localdate()

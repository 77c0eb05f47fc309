"""The forecast core on plain data: no database."""
from datetime import date, timedelta
from decimal import Decimal

import pytest

from fleetcare import words
from fleetcare.budget import forecast as fc

TODAY = date(2026, 12, 2)


def tray(**overrides):
    """A 24-cell 48 V traction tray, five years' design life, at a site that charges it once a day."""
    values = dict(
        battery_id=1, serial="T-1", site_code="tw", profile_id=1, profile_name="48 V 24-cell",
        in_service_date=date(2025, 6, 1), design_life_years=5.0, design_cycles=1500, charges_per_day=1.0,
        unit_price=Decimal("7800"), weight_kg=Decimal("1350"), cell_count=24, full_charge_sg=1.290,
    )
    values.update(overrides)
    return fc.ServiceHistory(**values)


def post_charge(start, days_apart, means, spreads=None, lowest=None, mins=None):
    out = []
    for i, mean in enumerate(means):
        out.append(fc.PostCharge(
            taken_on=start + timedelta(days=i * days_apart), sg_mean=mean,
            sg_spread=spreads[i] if spreads else 0.008, lowest_position=lowest[i] if lowest else 4,
            sg_min=mins[i] if mins else mean - 0.004,
        ))
    return tuple(out)


def test_it_dates_an_ageing_battery_by_its_design_life():
    facts = tray(in_service_date=date(2022, 5, 10), charges_per_day=0.5, design_cycles=5000)
    result = fc.forecast_battery(facts, TODAY)
    assert result.decided_by.kind == fc.AGE
    assert result.likely == date(2027, 5, 10)  # 5 x 365.25 days after 2022-05-10
    assert fc.quarter_of(result.likely)[0] == "2027 Q2"
    # the range is the 15 % planning margin of a 5-year life either side: 274 days
    assert result.earliest == date(2026, 8, 9) and result.latest == date(2028, 2, 8)


def test_it_counts_design_cycles_at_the_sites_charges_per_day():
    # 1.5 charges a day at 80 % depth (every charge a full design cycle): 1500 cycles after 1000 days
    facts = tray(in_service_date=date(2026, 6, 5), charges_per_day=1.5)
    result = fc.forecast_battery(facts, TODAY)
    assert result.decided_by.kind == fc.CYCLES
    assert result.likely == date(2026, 6, 5) + timedelta(days=1000)


def test_a_charge_at_half_the_design_depth_counts_as_half_a_cycle():
    facts = tray(in_service_date=date(2026, 6, 5), charges_per_day=1.5, measured_depth_percent=40.0)
    cycles = fc.cycles_evidence(facts, TODAY, fc.Rules())
    assert cycles.likely == date(2026, 6, 5) + timedelta(days=2000)
    assert "40 % depth (before-charge readings)" in cycles.detail


def test_logged_charges_count_when_they_come_more_often_than_the_site_says():
    facts = tray(in_service_date=date(2026, 6, 5), charges_per_day=0.2, logged_charges=360,
                 first_logged_charge=TODAY - timedelta(days=180))
    count = fc.charge_count(facts, TODAY)
    assert count.basis == "logged charges" and count.per_day == 2.0
    assert count.charges == 360  # logging started on the in-service date


def test_a_capacity_test_under_80_percent_makes_the_battery_due_now():
    # IEEE Std 450 practice: replace under 80 % of rated capacity (from memory)
    facts = tray(capacity_tests=((date(2025, 12, 1), 92.0), (date(2026, 6, 1), 86.0), (date(2026, 11, 20), 79.5)))
    result = fc.forecast_battery(facts, TODAY)
    assert result.decided_by.kind == fc.CAPACITY
    assert result.likely == date(2026, 11, 20) and result.overdue
    line = fc.budget_lines(result, TODAY, fc.horizon_end(TODAY, 5), fc.Money())[0]
    assert line.budget_date == TODAY and line.quarter == "2026 Q4" and line.overdue_since == date(2026, 11, 20)


def test_a_falling_capacity_trend_is_extrapolated_to_80_percent():
    # 100 % -> 95 % -> 90 % 365 days apart: 80 % another 730 days after the last test
    tests = ((date(2024, 12, 1), 100.0), (date(2025, 12, 1), 95.0), (date(2026, 12, 1), 90.0))
    result = fc.forecast_battery(tray(in_service_date=date(2024, 11, 1), capacity_tests=tests), TODAY)
    assert result.decided_by.kind == fc.CAPACITY
    assert result.likely == date(2028, 11, 30)
    assert fc.quarter_of(result.likely)[0] == "2028 Q4"
    assert result.set_aside == fc.LIFE_EXPECTANCY
    assert result.earliest < result.likely < result.latest


def test_one_capacity_test_above_the_floor_gives_no_date():
    result = fc.forecast_battery(tray(capacity_tests=((date(2026, 10, 1), 93.0),)), TODAY)
    capacity = next(e for e in result.evidence if e.kind == fc.CAPACITY)
    assert not capacity.dated and "no trend yet" in capacity.detail
    assert result.decided_by.kind != fc.CAPACITY


def test_a_failing_cell_on_a_young_tray_offers_the_cell_option():
    # cell 9 sits 0.045 below the mean on the last post-charge readings and the weak-cell finding calls it failing
    points = post_charge(date(2026, 11, 1), 7, [1.287, 1.288, 1.286, 1.287], spreads=[0.050] * 4,
                         lowest=[9, 9, 9, 9], mins=[1.242, 1.243, 1.241, 1.242])
    facts = tray(post_charge=points, charges_per_day=0.5, weak_cells=(9,))
    result = fc.forecast_battery(facts, TODAY)
    assert result.cell_option == (9,)
    assert result.decided_by.kind == fc.AGE  # the battery itself still runs to its design life
    money = fc.Money(installation=Decimal("450"), scrap_credit_per_kg=Decimal("0.60"), cell_cost=Decimal("380"))
    cells, battery = fc.budget_lines(result, TODAY, fc.horizon_end(TODAY, 5), money)
    assert cells.kind == fc.CELL_LINE and cells.label == "Replace cell 9" and cells.quarter == "2026 Q4"
    # one cell: 380 less its share of the scrap (1350 kg / 24 cells x 0.60 = 33.75)
    assert cells.amount == Decimal("346.25")
    assert cells.whole_battery_amount == Decimal("7440.00")  # 7800 + 450 - 1350 x 0.60
    assert battery.kind == fc.BATTERY and battery.budget_date == date(2030, 6, 1)


def test_low_post_charge_readings_alone_do_not_budget_a_cell():
    # the same readings without a finding calling the cell failing: the budget does not judge cells itself
    points = post_charge(date(2026, 11, 1), 7, [1.287, 1.288, 1.286, 1.287], spreads=[0.050] * 4,
                         lowest=[9, 9, 9, 9], mins=[1.242, 1.243, 1.241, 1.242])
    result = fc.forecast_battery(tray(post_charge=points, charges_per_day=0.5), TODAY)
    assert result.cell_option == () and all(e.kind != fc.CELLS for e in result.evidence)


def test_a_weak_cell_finding_counts_as_a_failing_cell():
    result = fc.forecast_battery(tray(weak_cells=(3, 17)), TODAY)
    assert result.cell_option == (3, 17)


def test_three_failing_cells_condemn_the_whole_tray():
    result = fc.forecast_battery(tray(weak_cells=(3, 17, 20)), TODAY)
    assert result.cell_option == ()
    assert result.decided_by.kind == fc.CELLS and result.likely == TODAY


def test_no_cell_option_when_the_tray_is_worn_out_anyway():
    result = fc.forecast_battery(tray(in_service_date=date(2021, 1, 1), weak_cells=(9,)), TODAY)
    assert result.cell_option == ()
    assert result.overdue


def test_a_sealed_pair_with_a_weak_block_is_replaced_as_a_pair():
    pair = tray(traction_tray=False, cell_count=12, design_life_years=2.0, design_cycles=400, weak_block=True,
                in_service_date=date(2026, 9, 1),
                unit_price=Decimal("310"), weight_kg=Decimal("42"), full_charge_sg=None)
    result = fc.forecast_battery(pair, TODAY)
    assert result.cell_option == () and result.decided_by.kind == fc.CELLS and result.likely == TODAY


def test_a_falling_average_sg_says_when_to_equalize_and_test_not_when_to_replace():
    # 1.285 falling 0.001 a week: reaches 1.260 (1.290 full charge less 0.030) 25 weeks after the first reading
    start = date(2026, 6, 2)
    points = post_charge(start, 7, [1.285 - 0.001 * i for i in range(20)])
    result = fc.forecast_battery(tray(post_charge=points), TODAY)
    sg = next(e for e in result.evidence if e.kind == fc.SG_MEAN)
    assert not sg.dated and result.decided_by.kind != fc.SG_MEAN
    assert f"at the limit about {words.day(start + timedelta(days=175))}: equalize and test" in sg.detail


def test_a_low_average_sg_calls_for_equalize_and_test_before_any_replacement():
    points = post_charge(date(2026, 10, 1), 7, [1.255, 1.254, 1.256, 1.255])  # 0.035 short of 1.290
    result = fc.forecast_battery(tray(post_charge=points), TODAY)
    sg = next(e for e in result.evidence if e.kind == fc.SG_MEAN)
    assert sg.action.startswith("Equalize and test: give a full charge followed by an equalizing charge")
    assert not sg.dated and not result.overdue and result.decided_by.kind in fc.LIFE_EXPECTANCY


def test_a_low_average_sg_with_a_capacity_test_under_the_floor_is_replaced():
    points = post_charge(date(2026, 10, 1), 7, [1.255, 1.254, 1.256, 1.255])
    result = fc.forecast_battery(tray(post_charge=points, capacity_tests=((date(2026, 11, 25), 78.0),)), TODAY)
    assert result.decided_by.kind == fc.CAPACITY and result.overdue


def test_steady_sg_readings_give_no_sg_date():
    points = post_charge(date(2026, 1, 5), 7, [1.286 + (0.002 if i % 2 else -0.002) for i in range(40)])
    sg = fc.sg_mean_evidence(tray(post_charge=points), TODAY, fc.Rules())
    assert not sg.dated and "no clear fall" in sg.detail


def test_a_rising_spread_is_extrapolated_to_the_spread_limit():
    start = date(2026, 6, 2)
    spreads = [0.010 + 0.001 * i for i in range(20)]  # 0.050 after 40 weeks
    points = post_charge(start, 7, [1.286] * 20, spreads=spreads, lowest=[i % 24 + 1 for i in range(20)])
    spread = fc.spread_evidence(tray(post_charge=points), TODAY, fc.Rules())
    assert spread.likely == start + timedelta(days=280)


def test_cost_is_escalated_price_plus_installation_less_scrap_credit():
    money = fc.Money(installation=Decimal("450"), scrap_credit_per_kg=Decimal("0.60"), escalation_percent=Decimal("3"))
    facts = tray(in_service_date=TODAY - timedelta(days=1826), design_life_years=5.0 + 4.0, design_cycles=90000)
    result = fc.forecast_battery(facts, TODAY)
    line = fc.budget_lines(result, TODAY, fc.horizon_end(TODAY, 5), money)[0]
    assert (line.budget_date - TODAY).days == 1461  # four years of 365.25 days
    assert line.escalated_price == Decimal("8778.97")  # 7800 x 1.03^4 = 7800 x 1.12550881 = 8778.969
    assert line.amount == Decimal("8418.97")  # + 450 installation - 1350 kg x 0.60 scrap credit


def test_a_short_lived_pair_is_budgeted_again_after_its_replacement():
    pair = tray(traction_tray=False, cell_count=12, design_life_years=2.0, design_cycles=5000,
                in_service_date=date(2024, 12, 2), unit_price=Decimal("310"), weight_kg=Decimal("42"),
                full_charge_sg=None)
    lines = fc.budget_lines(fc.forecast_battery(pair, TODAY), TODAY, fc.horizon_end(TODAY, 5), fc.Money())
    assert [ln.kind for ln in lines] == [fc.BATTERY, fc.RENEWAL, fc.RENEWAL]
    assert [ln.quarter for ln in lines] == ["2026 Q4", "2028 Q4", "2030 Q4"]
    once = fc.budget_lines(fc.forecast_battery(pair, TODAY), TODAY, fc.horizon_end(TODAY, 5),
                           fc.Money(include_renewals=False))
    assert len(once) == 1


@pytest.mark.parametrize("day, start_month, label", [
    (date(2027, 3, 31), 4, "FY2027"),  # April start: April 2026 to March 2027 is FY2027
    (date(2027, 4, 1), 4, "FY2028"),
    (date(2026, 6, 30), 7, "FY2026"),
    (date(2026, 7, 1), 7, "FY2027"),
    (date(2026, 12, 31), 1, "FY2026"),
    (date(2026, 10, 1), 10, "FY2027"),  # the US federal convention: October start, named for its end
])
def test_fiscal_years_are_named_for_the_year_they_end_in(day, start_month, label):
    assert fc.fiscal_year_of(day, start_month) == label


def test_a_fiscal_year_starting_mid_quarter_splits_that_quarter():
    # February start: January 2027 is in FY2027, February and March 2027 in FY2028
    ageing = [
        tray(battery_id=1, serial="A", in_service_date=date(2022, 1, 20), design_cycles=90000),
        tray(battery_id=2, serial="B", in_service_date=date(2022, 2, 20), design_cycles=90000),
        tray(battery_id=3, serial="C", in_service_date=date(2022, 3, 20), design_cycles=90000),
    ]
    budget = fc.build_budget(ageing, TODAY, 1, fc.Money(fiscal_year_start_month=2, include_renewals=False))
    q1 = [(q.label, q.fiscal_year, q.count) for q in budget.quarters if q.label == "2027 Q1"]
    assert q1 == [("2027 Q1", "FY2027", 1), ("2027 Q1", "FY2028", 2)]
    assert [(f.label, f.count) for f in budget.fiscal_years] == [("FY2027", 1), ("FY2028", 2)]
    assert budget.quarter("2027 Q1").count == 3
    assert sum(q.amount for q in budget.quarters) == budget.total == sum(f.amount for f in budget.fiscal_years)


def test_the_budget_has_every_quarter_of_the_horizon_even_empty_ones():
    budget = fc.build_budget([], TODAY, 2)
    assert [q.label for q in budget.quarter_totals] == [
        "2026 Q4", "2027 Q1", "2027 Q2", "2027 Q3", "2027 Q4", "2028 Q1", "2028 Q2", "2028 Q3", "2028 Q4",
    ]
    assert budget.total == 0


def test_a_trend_needs_two_dates():
    assert fc.fit_trend([(TODAY, 90.0)]) is None
    trend = fc.fit_trend([(TODAY, 90.0), (TODAY + timedelta(days=10), 89.0), (TODAY + timedelta(days=20), 88.0)])
    assert trend.slope == pytest.approx(-0.1) and trend.slope_se == pytest.approx(0.0)


def test_a_profile_without_a_design_life_is_budgeted_once_not_endlessly():
    facts = tray(design_life_years=0.0, design_cycles=0)
    lines = fc.budget_lines(fc.forecast_battery(facts, TODAY), TODAY, fc.horizon_end(TODAY, 5), fc.Money())
    assert len(lines) == 1 and lines[0].quarter == "2026 Q4"


def test_a_profile_without_design_cycles_is_renewed_by_age_alone():
    facts = tray(in_service_date=date(2024, 12, 2), design_life_years=2.0, design_cycles=0)
    lines = fc.budget_lines(fc.forecast_battery(facts, TODAY), TODAY, fc.horizon_end(TODAY, 5), fc.Money())
    assert [ln.quarter for ln in lines] == ["2026 Q4", "2028 Q4", "2030 Q4"]

import datetime as dt
import json
import re
import zoneinfo

import pytest
from django.db import connection
from django.test.utils import CaptureQueriesContext
from django.urls import reverse

from fleetcare.care.models import Finding
from fleetcare.dashboard import selectors
from fleetcare.fleet.models import Battery, Fitting, Vehicle
from fleetcare.readings import services
from fleetcare.readings.models import Inspection
from tests.dashboard.conftest import read, water

HOME = "/"


def section(context, title):
    return next(s for s in context["sections"] if s["title"].startswith(title))


def row(context, title, label):
    return next(r for r in section(context, title)["rows"] if r["label"] == label)


def counts(context, title, label):
    """The row's counts: one per site column, then the all-sites total."""
    return [c["count"] for c in row(context, title, label)["cells"]]


def figure(html, element_id):
    found = re.search(rf'<script type="application/json" id="{element_id}-data">(.*?)</script>', html, re.DOTALL)
    return json.loads(found.group(1)) if found else None


@pytest.fixture
def super_client(client, supervisor):
    client.force_login(supervisor)
    return client


def test_it_sends_anonymous_users_to_sign_in(client, db):
    assert client.get(HOME)["Location"].startswith("/accounts/login/")


def test_crew_land_on_todays_work_with_the_big_log_a_reading_button(crew_client, battery, site):
    crew_client.cookies["fc_site"] = site.code  # the site this tablet last opened
    response = crew_client.get(HOME, follow=True)
    assert response.redirect_chain[-1][0] == f"/planner/{site.code}/today/"
    html = response.content.decode()
    assert "plotly" not in html.lower()
    assert re.search(r'class="btn btn-primary btn-lg[^"]*" href="/readings/[^"]*">Log a reading<', html)


def test_it_counts_batteries_by_status_per_site_and_for_all_sites(
    super_client, battery, sealed_battery, other_battery, traction_profile, site
):
    Battery.objects.create(
        serial="TW-002", profile=traction_profile, site=site, status="spare", in_service_date=dt.date(2025, 1, 1)
    )
    Battery.objects.create(
        serial="TW-OLD", profile=traction_profile, site=site, status="retired", in_service_date=dt.date(2015, 1, 1)
    )
    context = super_client.get(HOME).context
    assert [c["name"] for c in context["columns"]] == ["Test residence", "Test warehouse", "All my sites"]
    assert counts(context, "Batteries by status", "In service") == [1, 1, 2]  # the other site's battery is not mine
    assert counts(context, "Batteries by status", "Spare") == [0, 1, 1]  # retired ones are left out
    spare_all = row(context, "Batteries by status", "Spare")["cells"][-1]
    assert spare_all["url"] == reverse("fleet:batteries") + "?status=spare"
    assert (
        row(context, "Batteries by status", "Spare")["cells"][1]["url"]
        == reverse("fleet:batteries") + "?status=spare&site=tw"
    )


def test_it_bands_state_of_charge_at_each_batterys_latest_reading_after_charge_or_rest(
    super_client, battery, sealed_battery, supervisor, now, traction_profile, site
):
    # Profile: full 1.290, discharged 1.140, SOC linear between (field notes: common practice).
    read(battery, supervisor, now - dt.timedelta(days=2), "charged", sg="1.290")  # 100 %
    read(battery, supervisor, now - dt.timedelta(hours=3), "before_charge", sg="1.155", scope="pilot")  # 10 %
    second = Battery.objects.create(
        serial="TW-002", profile=traction_profile, site=site, in_service_date=dt.date(2025, 1, 1)
    )
    read(second, supervisor, now - dt.timedelta(hours=1), "rested", sg="1.215", scope="pilot")  # 50 %
    third = Battery.objects.create(
        serial="TW-003", profile=traction_profile, site=site, in_service_date=dt.date(2025, 1, 1)
    )
    read(third, supervisor, now - dt.timedelta(hours=1), "rested", sg="1.155", scope="pilot")  # 10 %
    assert Inspection.objects.current().get(battery=second).soc_percent == 50
    context = super_client.get(HOME).context
    # a before-charge reading shows how far a battery was run down (a deep discharge), not its band
    assert counts(context, "State of charge", "80 % and over") == [0, 1, 1]
    assert counts(context, "State of charge", "Below 20 %") == [0, 1, 1]
    assert counts(context, "State of charge", "50–80 %") == [0, 1, 1]
    assert counts(context, "State of charge", "No reading after charge or rest") == [1, 0, 1]  # the sealed pair
    assert row(context, "State of charge", "Below 20 %")["attention"]
    listed = super_client.get(reverse("fleet:batteries"), {"soc": "below20"}).context["page"].object_list
    assert [b.serial for b in listed] == ["TW-003"]  # the battery list's filter agrees with the count


def test_it_counts_open_findings_by_kind_and_leaves_cleared_ones_out(super_client, battery, sealed_battery, now):
    Finding.objects.create(battery=battery, kind="weak_cell", opened_at=now, last_seen_at=now)
    Finding.objects.create(
        battery=sealed_battery, kind="weak_block", state="acknowledged", opened_at=now, last_seen_at=now
    )
    Finding.objects.create(
        battery=battery, kind="sulfation", state="cleared", opened_at=now, last_seen_at=now, cleared_at=now
    )
    context = super_client.get(HOME).context
    labels = [r["label"] for r in section(context, "Open findings")["rows"]]
    assert labels == ["Weak cell", "Weak block in a pair"]
    assert counts(context, "Open findings", "Weak cell") == [0, 1, 1]
    assert row(context, "Open findings", "Weak cell")["cells"][-1]["url"].endswith("?finding=weak_cell")


def test_it_counts_overdue_equalizing_and_watering_by_the_planners_default_seven_days(
    super_client, battery, sealed_battery, supervisor, now
):
    read(battery, supervisor, now - dt.timedelta(days=3), "equalized")
    water(battery, supervisor, now - dt.timedelta(days=8), 2400)
    context = super_client.get(HOME).context
    assert counts(context, "Care", "Equalizing overdue") == [0, 0, 0]
    assert counts(context, "Care", "Watering overdue") == [0, 1, 1]  # the sealed pair takes no water
    assert row(context, "Care", "Watering overdue")["cells"][1]["url"].endswith("?overdue=watering&site=tw")


def test_an_equalizing_older_than_seven_days_or_a_deleted_one_does_not_count(super_client, battery, supervisor, now):
    read(battery, supervisor, now - dt.timedelta(days=8), "equalized")
    recent = read(battery, supervisor, now - dt.timedelta(days=1), "equalized")
    services.remove_inspection(recent, user=supervisor, reason="taken on the wrong battery")
    assert counts(super_client.get(HOME).context, "Care", "Equalizing overdue")[-1] == 1


def test_it_counts_batteries_past_their_design_life(super_client, battery, sealed_battery, traction_profile, site):
    # 5-year design life (profile default; field notes: roughly five years in one-shift use).
    Battery.objects.create(serial="TW-AGED", profile=traction_profile, site=site, in_service_date=dt.date(2018, 3, 1))
    assert counts(super_client.get(HOME).context, "Care", "Older than design life (years)") == [0, 1, 1]


def test_another_sites_overview_answers_404(super_client, other_site, battery):
    assert super_client.get(HOME, {"site": other_site.code}).status_code == 404
    assert super_client.get(HOME, {"site": "tw"}).status_code == 200


@pytest.mark.parametrize("size", [3, 30])
def test_it_is_built_in_a_fixed_number_of_queries_whatever_the_fleet_size(
    super_client, build_fleet, size, django_assert_max_num_queries
):
    build_fleet(size)
    with django_assert_max_num_queries(16):
        response = super_client.get(HOME)
    assert response.status_code == 200
    assert counts(response.context, "Batteries by status", "In service")[-1] == size


def test_the_query_count_does_not_grow_with_the_fleet(super_client, build_fleet):
    build_fleet(2, prefix="A")
    with CaptureQueriesContext(connection) as small:
        super_client.get(HOME)
    build_fleet(12, prefix="B")
    with CaptureQueriesContext(connection) as large:
        super_client.get(HOME)
    assert len(large.captured_queries) == len(small.captured_queries)


def test_every_chart_is_drawn_for_a_fleet_with_history(super_client, build_fleet):
    build_fleet(3)
    html = super_client.get(HOME).content.decode()
    for element_id in ("chart-fleet-soc", "chart-findings-weekly", "chart-water-monthly", "chart-worst-spread"):
        assert figure(html, element_id) is not None, element_id
    assert 'src="/static/vendor/plotly/plotly.min.js"' in html  # served locally, never from the internet


def test_deep_discharge_counts_against_the_truck_and_shift_the_battery_was_fitted_to(battery, supervisor, now, site):
    # Under 20 % state of charge is deep discharge (field notes: 80 % depth of discharge, common practice).
    night_truck = Vehicle.objects.create(asset_number="FL-02", kind="forklift", site=site)
    fitting = battery.fittings.get()
    fitting.fitted_at = now - dt.timedelta(days=30)
    fitting.shift = "Day"
    fitting.removed_at = now - dt.timedelta(days=10)
    fitting.save()
    Fitting.objects.create(battery=battery, vehicle=night_truck, fitted_at=now - dt.timedelta(days=10), shift="Night")
    read(
        battery, supervisor, now - dt.timedelta(days=20), "before_charge", sg="1.155", scope="pilot"
    )  # 10 %: FL-01 Day
    read(battery, supervisor, now - dt.timedelta(days=5), "in_use", sg="1.155", scope="pilot")  # FL-02 Night
    read(
        battery, supervisor, now - dt.timedelta(days=4), "before_charge", sg="1.160", scope="pilot"
    )  # 13 %: FL-02 Night
    read(battery, supervisor, now - dt.timedelta(days=3), "before_charge", sg="1.200", scope="pilot")  # 40 %: not deep
    # rested counts too: any reading under 20 % is a deep discharge (field notes, "Measuring well")
    read(battery, supervisor, now - dt.timedelta(days=2), "rested", sg="1.155", scope="pilot")
    counts = selectors.deep_discharge_by_truck_and_shift(Battery.objects.all(), now - dt.timedelta(days=90))
    assert counts == {("FL-01", "Day"): 1, ("FL-02", "Night"): 3}


def test_deep_discharge_counts_whole_batteries_and_moved_ones_alike(battery, supervisor, now, site, traction_profile):
    # Three cases in one fleet: a battery in one truck all along (counted per battery in SQL), a battery
    # that moved trucks inside the window (matched event by event) and one never fitted.
    moved = Battery.objects.create(serial="TW-MOV", profile=traction_profile, site=site, in_service_date=dt.date(2025, 1, 1))
    loose = Battery.objects.create(serial="TW-LSE", profile=traction_profile, site=site, in_service_date=dt.date(2025, 1, 1))
    day_truck = Vehicle.objects.create(asset_number="FL-07", kind="forklift", site=site)
    night_truck = Vehicle.objects.create(asset_number="FL-08", kind="forklift", site=site)
    Fitting.objects.create(battery=moved, vehicle=day_truck, fitted_at=now - dt.timedelta(days=60),
                           removed_at=now - dt.timedelta(days=15), shift="Day")
    Fitting.objects.create(battery=moved, vehicle=night_truck, fitted_at=now - dt.timedelta(days=12), shift="Night")
    battery.fittings.update(fitted_at=now - dt.timedelta(days=60))
    for days in (40, 30, 5):
        read(battery, supervisor, now - dt.timedelta(days=days), "before_charge", sg="1.155", scope="pilot")
    for days in (50, 14, 13, 2):  # 14 and 13 days ago: between the two fittings, so not fitted
        read(moved, supervisor, now - dt.timedelta(days=days), "in_use", sg="1.155", scope="pilot")
    read(loose, supervisor, now - dt.timedelta(days=3), "before_charge", sg="1.155", scope="pilot")
    with CaptureQueriesContext(connection) as queries:
        counts = selectors.deep_discharge_by_truck_and_shift(Battery.objects.all(), now - dt.timedelta(days=90))
    assert counts == {
        ("FL-01", "No shift set"): 3,
        ("FL-07", "Day"): 1,
        ("FL-08", "Night"): 1,
        ("Not fitted", "No shift set"): 3,
    }
    assert len(queries.captured_queries) == 4  # policy rows, events per battery, fittings, the moved battery's events


def test_the_water_chart_names_the_battery_that_stands_out(super_client, site, traction_profile, supervisor, now):
    # Tukey's fences (1.5 interquartile ranges beyond the quartiles): a common statistical convention.
    last_month = now.replace(day=1) - dt.timedelta(days=10)
    for k, ml in enumerate([2400, 2500, 2300, 2450, 2350, 7200]):
        b = Battery.objects.create(
            serial=f"W-{k}", profile=traction_profile, site=site, in_service_date=dt.date(2024, 1, 1)
        )
        water(b, supervisor, last_month, ml)
    fig = figure(super_client.get(HOME).content.decode(), "chart-water-monthly")
    outliers = fig["data"][1]
    assert outliers["text"] == ["W-5"] and outliers["y"] == [300.0]  # 7,200 mL over 24 cells


def test_a_flooded_battery_in_service_with_no_water_logged_counts_as_zero(
    super_client, site, traction_profile, supervisor, now
):
    last_month = now.replace(day=1) - dt.timedelta(days=10)
    for k in range(6):
        b = Battery.objects.create(
            serial=f"W-{k}", profile=traction_profile, site=site, in_service_date=dt.date(2024, 1, 1)
        )
        if k:
            water(b, supervisor, last_month, 2400 + 24 * k)
    fig = figure(super_client.get(HOME).content.decode(), "chart-water-monthly")
    assert fig["data"][1]["text"] == ["W-0"] and fig["data"][1]["y"] == [0.0]


def test_the_findings_chart_counts_openings_and_clearings_per_week(super_client, battery, now):
    Finding.objects.create(battery=battery, kind="weak_cell", opened_at=now, last_seen_at=now)
    Finding.objects.create(
        battery=battery,
        kind="sulfation",
        state="cleared",
        opened_at=now - dt.timedelta(weeks=3),
        last_seen_at=now,
        cleared_at=now,
    )
    fig = figure(super_client.get(HOME).content.decode(), "chart-findings-weekly")
    opened, cleared = fig["data"]
    assert sum(opened["y"]) == 2 and opened["y"][-1] == 1
    assert sum(cleared["y"]) == 1 and cleared["y"][-1] == 1


def test_the_spread_chart_follows_the_widest_batteries(super_client, battery, supervisor, now, traction_profile, site):
    read(battery, supervisor, now - dt.timedelta(days=1), "charged", weak=(9, "1.240"))  # 50 points
    calm = Battery.objects.create(
        serial="TW-CALM", profile=traction_profile, site=site, in_service_date=dt.date(2024, 1, 1)
    )
    read(calm, supervisor, now - dt.timedelta(days=1), "charged", weak=(2, "1.280"))  # 10 points
    fig = figure(super_client.get(HOME).content.decode(), "chart-worst-spread")
    assert [t["name"] for t in fig["data"]] == ["TW-001", "TW-CALM"]
    assert fig["data"][0]["y"] == [50]


def test_water_use_is_judged_against_batteries_of_the_same_profile(
    super_client, site, traction_profile, supervisor, now
):
    small = type(traction_profile).objects.create(
        name="24 V 12-cell 620 Ah",
        technology="flooded",
        nominal_voltage=24,
        monoblocks=1,
        cells_per_block=12,
        capacity_ah=620,
        full_charge_sg="1.280",
        discharged_sg="1.130",
    )
    last_month = now.replace(day=1) - dt.timedelta(days=10)
    for k, (profile, ml) in enumerate([(traction_profile, 2400)] * 5 + [(small, 600)] * 5 + [(small, 1300)]):
        b = Battery.objects.create(serial=f"W-{k:02d}", profile=profile, site=site, in_service_date=dt.date(2024, 1, 1))
        water(b, supervisor, last_month, ml + k)
    fig = figure(super_client.get(HOME).content.decode(), "chart-water-monthly")
    assert [t["name"] for t in fig["data"] if t["type"] == "box"] == ["24 V 12-cell 620 Ah", "48 V 24-cell 775 Ah"]
    named = [t for t in fig["data"] if t["type"] == "scatter"]
    assert len(named) == 1 and named[0]["text"] == ["W-10"]  # 108 mL per cell where its like use about 50


def test_a_battery_only_slightly_off_a_tight_fleet_is_not_named(super_client, site, traction_profile, supervisor, now):
    last_month = now.replace(day=1) - dt.timedelta(days=10)
    for k, ml in enumerate([2400, 2401, 2402, 2403, 2404, 2700]):  # 2,700 is outside the fences but only 12 % up
        b = Battery.objects.create(
            serial=f"W-{k}", profile=traction_profile, site=site, in_service_date=dt.date(2024, 1, 1)
        )
        water(b, supervisor, last_month, ml)
    fig = figure(super_client.get(HOME).content.decode(), "chart-water-monthly")
    assert [t["type"] for t in fig["data"]] == ["box"]


def test_a_site_that_charges_less_is_not_named_but_its_own_heavy_user_is(
    super_client, site, other_site, traction_profile, supervisor, now, django_user_model
):
    other_site.members.add(supervisor)
    last_month = now.replace(day=1) - dt.timedelta(days=10)
    for k, (where, ml) in enumerate([(site, 2400)] * 5 + [(other_site, 1200)] * 5 + [(other_site, 2900)]):
        b = Battery.objects.create(
            serial=f"W-{k:02d}", profile=traction_profile, site=where, in_service_date=dt.date(2024, 1, 1)
        )
        water(b, supervisor, last_month, ml + k)
    fig = figure(super_client.get(HOME).content.decode(), "chart-water-monthly")
    assert [t["text"] for t in fig["data"] if t["type"] == "scatter"] == [["W-10"]]


def test_a_planning_policy_sets_how_long_before_watering_is_overdue(super_client, battery, supervisor, now, site):
    from fleetcare.planner.models import Policy as PlanningPolicy

    water(battery, supervisor, now - dt.timedelta(days=10), 2400)
    assert counts(super_client.get(HOME).context, "Care", "Watering overdue")[-1] == 1
    PlanningPolicy.objects.create(site=site, water_every_days=14, note="maker: every two weeks")
    assert counts(super_client.get(HOME).context, "Care", "Watering overdue")[-1] == 0


def test_an_equalizing_charge_logged_in_the_planner_counts_as_equalized(super_client, battery, supervisor, now):
    from fleetcare.planner.models import EqualizingCharge

    assert counts(super_client.get(HOME).context, "Care", "Equalizing overdue")[-1] == 1
    EqualizingCharge.objects.create(
        battery=battery,
        by=supervisor,
        started_at=now - dt.timedelta(days=2),
        ended_at=now - dt.timedelta(days=2) + dt.timedelta(hours=3),
    )
    assert counts(super_client.get(HOME).context, "Care", "Equalizing overdue")[-1] == 0


def test_a_profile_equalized_only_by_charge_count_is_never_overdue_by_time(super_client, battery, traction_profile):
    from fleetcare.planner.models import Policy as PlanningPolicy

    PlanningPolicy.objects.create(profile=traction_profile, equalize_every_days=0, equalize_every_charges=5)
    context = super_client.get(HOME).context
    assert counts(context, "Care", "Equalizing overdue")[-1] == 0
    assert (
        super_client.get(row(context, "Care", "Equalizing overdue")["cells"][-1]["url"]).context["page"].paginator.count
        == 0
    )


def test_deep_discharge_follows_a_sites_findings_policy(battery, supervisor, now, site):
    from fleetcare.care.models import Policy as CarePolicy

    read(battery, supervisor, now - dt.timedelta(days=2), "before_charge", sg="1.178", scope="pilot")  # 25 %
    since = now - dt.timedelta(days=90)
    assert selectors.deep_discharge_by_truck_and_shift(Battery.objects.all(), since) == {}
    CarePolicy.objects.create(site=site, deep_discharge_soc_percent=30, note="site rule: stop at 30 %")
    assert selectors.deep_discharge_by_truck_and_shift(Battery.objects.all(), since) == {("FL-01", "No shift set"): 1}


def test_the_overview_and_the_battery_record_count_water_in_the_month_of_the_sites_clock(
    super_client, site, traction_profile, supervisor, now
):
    """A supervisor of sites on two clocks reads the overview in UTC; each battery's water still falls in the
    month of its own site's clock, the month its battery record shows it in. Here the big top-up lands in the
    first hours of last month in Tokyo, which is still the month before in UTC."""
    site.timezone = "Asia/Tokyo"  # the supervisor's other site stays on London's clock
    site.save()
    tokyo = zoneinfo.ZoneInfo("Asia/Tokyo")
    local_now = now.astimezone(tokyo)
    last_month = (local_now.replace(day=1) - dt.timedelta(days=1)).replace(day=1, hour=3, minute=0, second=0,
                                                                            microsecond=0)
    assert last_month.astimezone(dt.UTC).month != last_month.month  # 03:00 in Tokyo is the day before in UTC
    for k, ml in enumerate([2400, 2500, 2300, 2450, 2350, 7200]):
        b = Battery.objects.create(
            serial=f"W-{k}", profile=traction_profile, site=site, in_service_date=dt.date(2024, 1, 1)
        )
        water(b, supervisor, last_month + dt.timedelta(days=10 if k < 5 else 0), ml)
    fig = figure(super_client.get(HOME).content.decode(), "chart-water-monthly")
    outliers = fig["data"][1]
    assert outliers["text"] == ["W-5"] and outliers["y"] == [300.0]  # 7,200 mL over 24 cells
    assert outliers["x"] == [last_month.strftime("%b %Y")]
    record = super_client.get(reverse("fleet:battery", args=[Battery.objects.get(serial="W-5").pk]))
    chart = record.context["water_chart"]["data"][0]
    assert list(chart["x"]) == [last_month.strftime("%Y-%m")] and list(chart["y"]) == [300.0]

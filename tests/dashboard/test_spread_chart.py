"""The overview's chart of cells behind the others after charge shows the spread rule's own measure and lines
(fleetcare.care.rules.spread_is_high), so a battery drawn over a line is one with an equalizing finding and every
battery with one is drawn over the line it was found by: on the demo fleet and on a generated noisy fleet."""
import datetime as dt
from decimal import Decimal

import pytest
from django.core.management import call_command
from django.urls import reverse
from django.utils import timezone

from fleetcare.care.detection import detect_for_batteries
from fleetcare.care.models import Finding
from fleetcare.care.models import Policy as CarePolicy
from fleetcare.fleet.models import Battery, BatteryProfile, Site
from fleetcare.readings.models import Inspection
from fleetcare.readings.services import CellEntry, record_inspection
from tests.care import noisy_fleet
from tests.dashboard.conftest import read
from tests.dashboard.test_home import figure

DUE = " (equalizing due)"


@pytest.fixture
def admin_client_all(client, admin_user):
    client.force_login(admin_user)
    return client


def chart(client, site=None):
    html = client.get("/", {"site": site.code} if site else {}).content.decode()
    return figure(html, "chart-worst-spread")


def guides(fig):
    """(once, in a row, readings in a row) as drawn: the lines' heights, told apart by their labels."""
    lines = {a["text"]: a["y"] for a in fig["layout"]["annotations"]}
    once = [y for text, y in lines.items() if "once" in text]
    in_a_row = [(y, text) for text, y in lines.items() if "in a row" in text]
    assert len(once) == 1 and len(in_a_row) == 1, lines  # one setting in force for every battery here
    row_y, text = in_a_row[0]
    return once[0], row_y, int(text.split(" on ")[1].split(" ")[0])


def check_the_chart_agrees_with_the_findings(client, site):
    fig = chart(client, site)
    once, row_line, in_a_row = guides(fig)
    serial_of = {b.serial: b.pk for b in Battery.objects.filter(site=site)}
    with_finding = set(Finding.objects.active().filter(battery__site=site, kind="high_spread")
                       .values_list("battery__serial", flat=True))
    drawn = {t["name"].removesuffix(DUE): t for t in fig["data"]}
    marked = {name for name, t in drawn.items() if t["name"].endswith(DUE)}
    assert marked == with_finding
    for name, trace in drawn.items():
        latest = trace["y"][-1]
        run = trace["y"][-in_a_row:]
        if latest > once:
            assert name in with_finding, (name, trace["y"])
        if name in with_finding:
            assert latest > once or (len(run) == in_a_row and min(run) > row_line), (name, trace["y"])
    # The batteries not drawn are behind by less than the least of those drawn without a finding: none is over.
    unmarked = [t["y"][-1] for name, t in drawn.items() if name not in with_finding]
    assert all(y <= once for y in unmarked), unmarked
    assert set(drawn) <= set(serial_of)
    return fig, with_finding


def test_a_cell_far_behind_is_drawn_at_its_distance_from_the_middle_cell_and_marked(
    admin_client_all, battery, supervisor, now, traction_profile, site
):
    read(battery, supervisor, now - dt.timedelta(days=1), "charged", weak=(9, "1.240"))  # 50 points behind the rest
    detect_for_batteries(Battery.objects.filter(pk=battery.pk), now=now)
    calm = Battery.objects.create(serial="TW-CALM", profile=traction_profile, site=site,
                                  in_service_date=dt.date(2024, 1, 1))
    # 24 cells at 1.290 and two at 1.270: 40 points from highest to lowest, but no cell is more than 20 behind
    # the middle of the others (the median of 1.290s), so no finding and a line under the guide.
    read(calm, supervisor, now - dt.timedelta(days=1), "charged", weak=(2, "1.270"))
    detect_for_batteries(Battery.objects.filter(pk=calm.pk), now=now)
    fig = chart(admin_client_all)
    assert [(t["name"], t["y"]) for t in fig["data"]] == [("TW-001" + DUE, [50]), ("TW-CALM", [20])]
    # Default settings: 20 points (common practice, field notes) plus the hydrometer's 5 once; 20 twice running.
    assert guides(fig) == (25, 20, 2)
    assert "Cells behind the others after charge" in fig["layout"]["title"]["text"]
    reading = Inspection.objects.filter(battery=calm).get()
    assert reading.sg_spread == Decimal("0.020")
    # The reading's own page gives both: the plain spread, named as highest minus lowest, and the rule's measure.
    page = admin_client_all.get(reverse("readings:inspection", args=[reading.pk])).content.decode()
    assert "Spread (highest − lowest)" in page and '<div class="figure-big" id="spread">0.020</div>' in page
    assert '<div class="figure-big" id="behind">20 points</div>' in page


def test_a_half_point_behind_is_shown_as_one_on_the_chart_and_the_reading(admin_client_all, supervisor, now, site):
    tray = BatteryProfile.objects.create(
        name="18 V 9-cell tray", technology="flooded", application="traction", nominal_voltage=18, monoblocks=1,
        cells_per_block=9, capacity_ah=Decimal("400"), full_charge_sg=Decimal("1.290"), discharged_sg=Decimal("1.140"))
    battery = Battery.objects.create(serial="TW-NINE", profile=tray, site=site, in_service_date=dt.date(2024, 1, 1))
    # Cell 1's eight others: four at 1.285, four at 1.290, so their median is halfway, 1.2875: 37.5 points behind.
    cells = [CellEntry(position=1, sg=Decimal("1.250"))] + [
        CellEntry(position=p, sg=Decimal("1.285" if p <= 5 else "1.290")) for p in range(2, 10)]
    reading, _ = record_inspection(battery=battery, user=supervisor, taken_at=now - dt.timedelta(hours=2),
                                   situation="charged", cells=cells, temp_c=Decimal(25))
    assert reading.sg_behind_median == Decimal("0.0375")
    assert chart(admin_client_all)["data"][0]["y"] == [37.5]
    page = admin_client_all.get(reverse("readings:inspection", args=[reading.pk])).content.decode()
    assert '<div class="figure-big" id="behind">37.5 points</div>' in page


def test_the_chart_agrees_with_the_findings_on_a_generated_noisy_fleet(admin_client_all, crew):
    now = timezone.now().replace(microsecond=0)
    gen = noisy_fleet.FleetGenerator(20261203, crew, now)
    for cells in (12, 24, 40):
        for _ in range(3):
            gen.tray(cells)
        gen.tray(cells, "weak_cell")
        for _ in range(2):
            gen.tray(cells, noisy_fleet.LAGGING_CELL)
    detect_for_batteries(Battery.objects.filter(site=gen.site), now=now)
    fig, with_finding = check_the_chart_agrees_with_the_findings(admin_client_all, gen.site)
    assert len(with_finding) >= 3  # the weak cells at least
    once = guides(fig)[0]
    assert any(t["y"][-1] <= once for t in fig["data"])  # and batteries under the line are drawn too


def test_the_chart_agrees_with_the_findings_on_the_demo(admin_client_all, db):
    call_command("demo", "--no-serve", stdout=None)
    for site in Site.objects.all():
        if chart(admin_client_all, site) is not None:
            check_the_chart_agrees_with_the_findings(admin_client_all, site)


def test_the_lines_follow_the_sites_own_setting_and_name_the_batteries_where_settings_differ(
    admin_client_all, battery, other_battery, supervisor, now, other_site
):
    CarePolicy.objects.create(site=other_site, equalize_spread_sg=Decimal("0.030"), spread_readings_in_a_row=3,
                              note="site rule")
    for b in (battery, other_battery):
        read(b, supervisor, now - dt.timedelta(days=1), "charged", weak=(9, "1.262"))  # 28 points behind
        detect_for_batteries(Battery.objects.filter(pk=b.pk), now=now)
    # At its own site's 30 points (plus 5 once), the other site's battery is under its line and has no finding.
    assert list(Finding.objects.active().filter(kind="high_spread").values_list("battery__serial", flat=True)) == [
        battery.serial]
    fig = chart(admin_client_all, other_site)
    assert guides(fig) == (35, 30, 3)
    assert [t["name"] for t in fig["data"]] == [other_battery.serial]
    lines = {a["text"]: a["y"] for a in chart(admin_client_all)["layout"]["annotations"]}
    assert lines == {
        f"over 25 points once: equalizing due ({battery.serial})": 25,
        f"over 20 points on 2 charges in a row, same cell: equalizing due ({battery.serial})": 20,
        f"over 35 points once: equalizing due ({other_battery.serial})": 35,
        f"over 30 points on 3 charges in a row, same cell: equalizing due ({other_battery.serial})": 30,
    }

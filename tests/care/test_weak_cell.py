"""Weak cells and spread on post-charge inspections of the 24-cell test battery (full-charge SG 1.290).

Every comparison allows for the hydrometer (default resolution 0.005: a float hydrometer is graduated every
0.005 and a careful reading is good to about ±0.005; field notes, "Measuring well")."""
import datetime as dt
from decimal import Decimal

from fleetcare.care.models import Finding, Policy
from tests.care.helpers import detect, inspect, kinds, one, sgs

DAY = dt.timedelta(days=1)


def test_it_names_a_cell_below_the_others_after_a_charge(battery, crew, watered, now):
    # 0.040 below the other cells' mean: over 0.030 (common practice) plus the 0.005 resolution
    inspect(battery, crew, now - DAY, cells=sgs(low={9: "1.245"}))
    finding = one(detect(battery, now), "weak_cell")
    assert finding.positions == [9]
    assert finding.severity == Finding.Severity.WARNING
    assert finding.persistent is False
    cell = finding.evidence["readings"][0]["cells"][0]
    assert cell["position"] == 9 and cell["below_others_points"] == 40 and cell["reasons"] == ["weak"]
    assert finding.evidence["threshold"]["value"] == "0.030"
    assert "common practice" in finding.evidence["threshold"]["source"]
    resolution = next(t for t in finding.evidence["thresholds"] if t["name"] == "sg_resolution")
    assert resolution["value"] == "0.005" and "float hydrometers" in resolution["source"]
    assert "cell 9" in finding.summary.lower()


def test_it_stays_quiet_on_a_healthy_battery(battery, crew, watered, now):
    inspect(battery, crew, now - 8 * DAY, cells=sgs(low={3: "1.280", 17: "1.290"}))
    inspect(battery, crew, now - DAY, situation="equalized", cells=sgs(low={3: "1.281", 17: "1.291"}))
    assert detect(battery, now) == []


def test_the_mean_rule_holds_off_within_the_hydrometers_resolution(battery, crew, watered, now):
    # 0.035 below the mean is 0.030 + one resolution: a float hydrometer cannot tell it from 0.030
    inspect(battery, crew, now - DAY, cells=sgs(low={9: "1.250"}))
    assert "weak_cell" not in kinds(detect(battery, now))
    inspect(battery, crew, now, cells=sgs(low={9: "1.249"}))
    assert one(detect(battery, now), "weak_cell").evidence["readings"][0]["cells"][0]["reasons"] == ["weak"]


def test_a_digital_hydrometer_resolves_a_smaller_gap(battery, crew, watered, now, traction_profile):
    # digital hydrometers read to 0.001 (field notes): 0.032 below the mean is over 0.030 + 0.001
    inspect(battery, crew, now - DAY, cells=sgs(low={9: "1.253"}))
    assert "weak_cell" not in kinds(detect(battery, now))
    Policy.objects.create(profile=traction_profile, sg_resolution=Decimal("0.001"))
    assert "weak_cell" in kinds(detect(battery, now))


def test_the_any_two_cells_rule_is_off_on_a_24_cell_tray(battery, crew, watered, now, traction_profile):
    # The 0.025 rule (US Army TM 9-6140-200-14, from memory) is about batteries of a few cells: off by default
    # over 6 cells. With it on, two cells count as apart only beyond 0.025 + two resolutions (each reading
    # may be off by 0.005), and the mean rule relaxed here so only the gap can fire.
    inspect(battery, crew, now - DAY, cells=sgs(low={9: "1.249"}))
    Policy.objects.create(profile=traction_profile, weak_cell_below_mean_sg=Decimal("0.060"))
    assert "weak_cell" not in kinds(detect(battery, now))
    Policy.objects.filter(profile=traction_profile).update(cell_gap_rule_max_cells=24)
    inspect(battery, crew, now - DAY / 2, cells=sgs(low={9: "1.250"}))
    assert "weak_cell" not in kinds(detect(battery, now))  # 0.035 apart: 0.025 + 2 x 0.005, not beyond
    inspect(battery, crew, now, cells=sgs(low={9: "1.249"}))
    finding = one(detect(battery, now), "weak_cell")
    assert finding.evidence["readings"][0]["cells"][0]["reasons"] == ["apart"]
    gap = next(t for t in finding.evidence["thresholds"] if t["name"] == "unserviceable_cell_gap_sg")
    assert gap["default_source"] == "US Army TM 9-6140-200-14 (from memory of its text)"


def test_it_calls_a_cell_failing_when_equalizing_leaves_it_over_fifty_points_down(battery, crew, watered, now):
    # 0.050 below the others after equalizing means a failing cell (common practice), plus the resolution
    inspect(battery, crew, now - DAY, situation="equalized", cells=sgs(low={9: "1.229"}))
    finding = one(detect(battery, now), "weak_cell")
    assert finding.severity == Finding.Severity.URGENT
    assert "failing" in finding.summary
    assert "replaced" in finding.evidence["next_step"]


def test_fifty_five_points_after_equalizing_is_weak_but_not_yet_failing(battery, crew, watered, now):
    inspect(battery, crew, now - DAY, situation="equalized", cells=sgs(low={9: "1.230"}))
    finding = one(detect(battery, now), "weak_cell")
    assert finding.severity == Finding.Severity.WARNING
    assert "failing" not in finding.summary


def test_a_cell_low_on_two_post_charge_readings_in_a_row_is_persistent(battery, crew, watered, now):
    inspect(battery, crew, now - 8 * DAY, cells=sgs(low={9: "1.245"}))
    inspect(battery, crew, now - 4 * DAY, situation="before_charge", cells=sgs(low={9: "1.150"}, value="1.200"))
    inspect(battery, crew, now - DAY, cells=sgs(low={9: "1.244"}))
    assert one(detect(battery, now), "weak_cell").persistent is True


def test_a_pilot_reading_neither_opens_nor_clears_a_weak_cell(battery, crew, watered, now):
    inspect(battery, crew, now - 2 * DAY, cells=sgs(low={9: "1.245"}))
    inspect(battery, crew, now - DAY, scope="pilot", cells={1: Decimal("1.285")})
    assert "weak_cell" in kinds(detect(battery, now))


def test_policy_on_the_profile_and_the_site_override_in_order(battery, crew, watered, now, traction_profile, site):
    inspect(battery, crew, now - DAY, cells=sgs(low={9: "1.245"}))
    Policy.objects.create(profile=traction_profile, weak_cell_below_mean_sg=Decimal("0.040"))
    assert "weak_cell" not in kinds(detect(battery, now))
    Policy.objects.create(site=site, weak_cell_below_mean_sg=Decimal("0.030"), note="site rule")
    finding = one(detect(battery, now), "weak_cell")
    weak = finding.evidence["thresholds"][0]
    assert weak["value"] == "0.030" and weak["source"] == "policy for site tw"
    assert weak["default"] == "0.030"


def test_a_cell_behind_the_others_median_by_over_twenty_points_plus_one_resolution_calls_for_equalizing(
        battery, crew, watered, now):
    # post-charge spread over 0.020 calls for an equalizing charge (common practice), measured from the median of
    # the other cells; one reading counts only beyond 0.020 + 0.005 (the cell's reading may be off by a resolution)
    inspect(battery, crew, now - DAY, cells=sgs(low={4: "1.259"}))
    finding = one(detect(battery, now), "high_spread")
    assert finding.positions == [4]
    reading = finding.evidence["readings"][0]
    assert reading["sg_spread"] == 0.026 and reading["lagging_cells"] == [{"position": 4, "below_median_points": 26}]
    assert finding.persistent is False
    assert "cell 4" in finding.summary and "26 points" in finding.summary
    assert finding.evidence["caution"] == "equalize"


def test_one_cell_twenty_five_points_behind_is_not_evidence(battery, crew, watered, now):
    inspect(battery, crew, now - DAY, cells=sgs(low={4: "1.260"}))
    assert detect(battery, now) == []


def test_the_same_cell_over_the_limit_twice_in_a_row_counts(battery, crew, watered, now):
    # 0.021 behind is within what one reading can show; the same cell on two post-charge readings in a row is
    # evidence (its reading errors do not repeat)
    inspect(battery, crew, now - 3 * DAY, cells=sgs(low={4: "1.264"}))
    assert detect(battery, now) == []
    inspect(battery, crew, now - DAY, cells=sgs(low={4: "1.264"}))
    finding = one(detect(battery, now), "high_spread")
    assert finding.persistent is True and "consecutive" in finding.summary and finding.positions == [4]
    behind = [r["lagging_cells"] for r in finding.evidence["readings"]]
    assert behind == [[{"position": 4, "below_median_points": 21}]] * 2


def test_two_different_cells_each_behind_once_are_not_a_run(battery, crew, watered, now):
    inspect(battery, crew, now - 3 * DAY, cells=sgs(low={4: "1.264"}))
    inspect(battery, crew, now - DAY, cells=sgs(low={7: "1.264"}))
    assert detect(battery, now) == []


def test_exactly_the_limit_twice_is_a_near_miss(battery, crew, watered, now):
    inspect(battery, crew, now - 3 * DAY, cells=sgs(low={4: "1.265"}))
    inspect(battery, crew, now - DAY, cells=sgs(low={4: "1.265"}))
    assert detect(battery, now) == []


def test_a_wide_but_even_tray_is_not_a_spread_finding(battery, crew, watered, now):
    # Extremes 0.028 apart on two readings in a row, but no cell more than 0.014 from the others' median: the
    # spread of many healthy cells, not a cell falling behind (the highest-minus-lowest rule used to flag it)
    for days in (3, 1):
        inspect(battery, crew, now - days * DAY, cells=sgs(low={4: "1.271", 9: "1.299"}))
    assert detect(battery, now) == []


def test_spread_limit_follows_the_profile_policy(battery, crew, watered, now, traction_profile):
    inspect(battery, crew, now - DAY, cells=sgs(low={4: "1.264"}))
    assert detect(battery, now) == []  # 0.021 once: under 0.020 + 0.005
    Policy.objects.create(profile=traction_profile, equalize_spread_sg=Decimal("0.015"))
    assert kinds(detect(battery, now)) == ["high_spread"]  # over 0.015 + 0.005


def test_the_readings_in_a_row_follow_policy(battery, crew, watered, now, traction_profile):
    inspect(battery, crew, now - 3 * DAY, cells=sgs(low={4: "1.264"}))
    inspect(battery, crew, now - DAY, cells=sgs(low={4: "1.264"}))
    Policy.objects.create(profile=traction_profile, spread_readings_in_a_row=3)
    assert detect(battery, now) == []

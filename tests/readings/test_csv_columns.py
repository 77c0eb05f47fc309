"""The optional columns (temp_unit, rest_hours), values stored but listed to check, and crafted input."""
import datetime as dt
from decimal import Decimal

import pytest
from django.utils import timezone

from fleetcare.fleet.models import Battery, Site
from fleetcare.readings.csv_io import import_readings
from fleetcare.readings.models import CellReading, Inspection

HEADER = "serial,taken_at,situation,cell,sg,temp,volts,level"


def run(text, user, **kwargs):
    return import_readings(text, user=user, batteries=Battery.objects.all(), **kwargs)


def tray(temp="77", unit=None, sgs=None, taken="2026-11-02T06:00"):
    header = HEADER + (",temp_unit" if unit is not None else "") + "\n"
    sgs = sgs or ["1.280"] * 24
    return header + "".join(
        f"TW-001,{taken},charged,{n},{sg},{temp},,ok{',' + unit if unit is not None else ''}\n"
        for n, sg in enumerate(sgs, start=1)
    )


def test_temperatures_are_read_in_the_sites_unit_and_the_summary_says_so(battery, crew):
    battery.site.temp_unit = Site.TempUnit.FAHRENHEIT
    battery.site.save()
    report = run(tray(temp="77"), crew)
    assert report.ok
    assert report.unit_summary() == ["°F (the battery's site unit): 24 rows"]
    assert set(CellReading.objects.values_list("temp_c", flat=True)) == {Decimal("25.0")}  # 77 °F = 25 °C
    assert Inspection.objects.get().temp_c == Decimal("25.0")


def test_a_temp_unit_column_wins_over_the_sites_unit(battery, crew):
    battery.site.temp_unit = Site.TempUnit.FAHRENHEIT
    battery.site.save()
    report = run(tray(temp="30", unit="C"), crew)
    assert report.unit_summary() == ["°C (temp_unit column): 24 rows"]
    assert set(CellReading.objects.values_list("temp_c", flat=True)) == {Decimal("30.0")}
    # corrected to 25 °C at +0.0007 per °C: 1.280 + 5 × 0.0007 = 1.2835 -> 1.284
    assert set(CellReading.objects.values_list("sg_corrected", flat=True)) == {Decimal("1.284")}


def test_a_fahrenheit_temperature_out_of_range_is_named_in_fahrenheit(battery, crew):
    report = run(tray(temp="200", unit="F"), crew)
    assert report.errors[0] == (2, "temp 200 °F is outside −22 to 158 °F.")


def test_an_unknown_temp_unit_is_refused(battery, crew):
    report = run(tray(unit="K"), crew)
    assert report.errors[0] == (2, "temp_unit “K” must be C or F.")
    assert not Inspection.objects.exists()


def test_rest_hours_let_a_sealed_pair_give_state_of_charge_from_voltage(sealed_battery, crew):
    text = ("serial,taken_at,situation,cell,sg,temp,volts,level,rest_hours\n"
            "TR-P01,2026-11-02T06:00,in_use,1,,,12.40,,6\nTR-P01,2026-11-02T06:00,in_use,2,,,12.42,,6\n"
            "TR-P01,2026-11-03T06:00,charged,1,,,12.40,,6\nTR-P01,2026-11-03T06:00,charged,2,,,12.42,,6\n")
    report = run(text, crew)
    assert report.ok and report.inspections_created == 2
    in_use, charged = Inspection.objects.order_by("taken_at")
    assert charged.hours_since_charge == Decimal("6.0") and charged.soc_basis == "ocv" and charged.soc_percent is not None
    assert in_use.soc_percent is None  # in use: never rested, whatever the hours say


def test_rest_hours_that_differ_within_one_reading_are_refused(sealed_battery, crew):
    text = ("serial,taken_at,situation,cell,sg,temp,volts,level,rest_hours\n"
            "TR-P01,2026-11-02T06:00,rested,1,,,12.40,,6\nTR-P01,2026-11-02T06:00,rested,2,,,12.42,,2\n")
    report = run(text, crew)
    assert report.errors == [(2, "rest_hours differs between the rows of one reading (2, 6).")]


def test_a_slip_is_stored_as_written_and_listed_with_its_line_and_cell(battery, crew):
    """2833 typed for cell 1 of a tray of 281s: cell 2 gets 1.328 (the slip described in the field notes)."""
    sgs = ["1.283", "1.328"] + ["1.281"] * 22
    report = run(tray(temp="25", unit="C", sgs=sgs), crew)
    assert report.ok and report.imported
    assert [(n.line, n.cell) for n in report.checks] == [(3, 2)]
    assert report.checks[0].message == ("cell 2: 1.328 is 0.047 above the other cells (median 1.281): a slip, a "
                                        "misread or acid added by mistake? Stored as written; check it.")
    assert CellReading.objects.get(position=2).sg == Decimal("1.328")


def test_suspect_cells_are_the_entry_screens_suspects_and_listed_in_the_dry_run_too(battery, crew):
    """The same values the tablet would ask to confirm (validation.suspect_cells), found by the import."""
    from fleetcare.readings import validation

    sgs = ["1.281"] * 24
    sgs[4] = "1.221"  # 0.060 below the others: a weak cell, or a slip
    sgs[9] = "1.305"  # 0.024 above: a slip, a misread or acid
    report = run(tray(temp="25", unit="C", sgs=sgs), crew, dry_run=True)
    assert report.ok and not Inspection.objects.exists()
    screen = validation.suspect_cells({n: Decimal(sg) for n, sg in enumerate(sgs, start=1)},
                                      validation.limits_for(battery, timezone.now()))
    assert sorted(screen) == [n.cell for n in report.checks] == [5, 10]
    assert [n.line for n in report.checks] == [6, 11]
    assert "0.060 below the other cells (median 1.281): a weak cell, or a slip?" in report.checks[0].message
    assert report.check_count == 2 and report.as_dict()["checks"][1][:2] == [11, 10]


def test_a_pilot_cell_outside_the_band_is_listed_but_a_whole_tray_outside_it_is_no_slip(battery, crew):
    """The traction profile's band: discharged 1.140 − 0.030 to full 1.290 + 0.030 (validation's margin)."""
    pilot = tray(temp="25", unit="C", sgs=["1.330"])
    whole = tray(temp="25", unit="C", sgs=["1.330"] * 24, taken="2026-11-03T06:00").split("\n", 1)[1]
    report = run(pilot + whole, crew)
    assert report.imported and report.inspections_created == 2
    assert [(n.line, n.cell) for n in report.checks] == [(2, 1)]
    assert "1.330 is above what this battery reads when full (over 1.320)" in report.checks[0].message
    assert CellReading.objects.filter(sg=Decimal("1.330")).count() == 25  # records already taken: stored as written


def test_a_sites_own_future_allowance_holds_for_the_import_as_for_the_form(battery, crew):
    from fleetcare.readings.models import EntryPolicy

    EntryPolicy.objects.create(site=battery.site, future_minutes=2)
    ahead = (timezone.now() + dt.timedelta(minutes=5)).astimezone(dt.timezone.utc)
    report = run(tray(temp="25", taken=ahead.isoformat(timespec="minutes")), crew)
    assert "is in the future (more than 2 minutes from now). Check the date in the file" in report.errors[0][1]
    assert not Inspection.objects.exists()


@pytest.mark.parametrize("taken,message", [
    ("0001-01-01T00:00+05:00", "0001-01-01T00:00+05:00: that date cannot be right. Check the date in the file"),
    ("1999-12-31T23:00", "1999-12-31T23:00 is before this battery entered service (15 Jan 2024). Check the date."),
    ("2023-06-01T06:00", "2023-06-01T06:00 is before this battery entered service (15 Jan 2024). Check the date."),
    ("2099-01-01T06:00", "2099-01-01T06:00 is in the future (more than 10 minutes from now)."),
    ("9" * 5000, "is not a date and time"),
])
def test_impossible_times_get_a_message(battery, crew, taken, message):
    report = run(tray(taken=taken), crew)
    assert message in report.errors[0][1]
    assert not Inspection.objects.exists()


@pytest.mark.parametrize("column,value,message", [
    ("cell", "9" * 5000, "is not a whole number"),
    ("sg", "1" * 5000, "sg is too long to be a reading."),
    ("temp", "2" * 5000, "temp is too long to be a reading."),
])
def test_a_five_thousand_digit_cell_gets_a_message(battery, crew, column, value, message):
    rows = tray(temp="25").splitlines()
    fields = rows[1].split(",")
    fields[["serial", "taken_at", "situation", "cell", "sg", "temp"].index(column)] = value
    rows[1] = ",".join(fields)
    report = run("\n".join(rows) + "\n", crew)
    assert message in report.errors[0][1]
    assert not Inspection.objects.exists()


def test_bytes_that_are_not_utf8_get_a_message(crew_client, battery):
    import io

    from django.urls import reverse

    upload = io.BytesIO(tray(temp="25").encode() + b"TW-001,2026-11-03T06:00,charged,1,1.280,25,,\xff\xfe\n")
    upload.name = "latin.csv"
    page = crew_client.post(reverse("readings:import"), {"file": upload}, follow=True).content.decode()
    assert "the file is not UTF-8 text" in page
    assert not Inspection.objects.exists()


def test_a_local_time_the_clocks_skipped_is_refused_with_the_sites_reason(battery, crew):
    """Europe/London went from 01:00 to 02:00 on 29 March 2026: 01:30 never happened there."""
    report = run(tray(temp="25", taken="2026-03-29T01:30"), crew)
    assert "did not happen at Test warehouse (Europe/London)" in report.errors[0][1]
    assert not Inspection.objects.exists()

import gc
import io
from decimal import Decimal

import pytest
from django.core.management import CommandError, call_command
from django.urls import reverse

from fleetcare.fleet.models import Battery
from fleetcare.readings import csv_io
from fleetcare.readings.csv_io import import_readings
from fleetcare.readings.models import CellReading, Inspection

HEADER = "serial,taken_at,situation,cell,sg,temp,volts,level\n"


def inspection_rows(serial="TW-001", taken="2026-11-02T06:00", situation="charged", cells=24, sg="1.280", temp="25"):
    return "".join(f"{serial},{taken},{situation},{n},{sg},{temp},,ok\n" for n in range(1, cells + 1))


def run(text, user, **kwargs):
    return import_readings(text, user=user, batteries=Battery.objects.all(), **kwargs)


def test_a_good_file_imports_every_inspection(battery, crew):
    text = HEADER + inspection_rows() + inspection_rows(taken="2026-11-09T06:00", sg="265")
    report = run(text, crew)
    assert report.ok and report.imported
    assert Inspection.objects.count() == 2
    assert CellReading.objects.count() == 48
    first = Inspection.objects.order_by("taken_at").first()
    assert first.sg_mean == Decimal("1.280")
    # SOC = (1.280 - 1.140) / (1.290 - 1.140) = 93.3 %
    assert first.soc_percent == Decimal("93.3")
    # a time without an offset is the site's local time (Europe/London, GMT in November)
    assert first.taken_at.isoformat() == "2026-11-02T06:00:00+00:00"


def test_one_bad_row_imports_nothing_and_names_the_line(battery, crew):
    rows = inspection_rows().splitlines(keepends=True)
    rows[6] = rows[6].replace("1.280", "1.480")
    report = run(HEADER + "".join(rows), crew)
    assert not report.imported
    assert report.errors == [(8, "sg 1.480 is outside 1.000–1.350.")]
    assert Inspection.objects.count() == 0


def test_good_rows_only_imports_the_good_inspections(battery, crew):
    bad = inspection_rows(taken="2026-11-09T06:00").replace("9,1.280", "9,abc")
    report = run(HEADER + inspection_rows() + bad, crew, good_rows_only=True)
    assert report.imported
    assert Inspection.objects.count() == 1
    assert any("sg" in message for _, message in report.errors)


@pytest.mark.parametrize("change,message", [
    (("TW-001,", "XX-999,"), "no battery with serial"),
    (("charged", "sideways"), "situation"),
    ((",25,", ",95,"), "temp 95"),
    (("2026-11-02T06:00", "yesterday"), "taken_at"),
])
def test_each_kind_of_bad_value_is_reported(battery, crew, change, message):
    report = run(HEADER + inspection_rows().replace(*change, 1), crew)
    assert not report.imported
    assert message in report.errors[0][1]
    assert report.errors[0][0] == 2


def test_the_wrong_number_of_cells_for_the_profile_is_reported(battery, crew):
    report = run(HEADER + inspection_rows(cells=20), crew)
    assert report.errors == [(2, "TW-001 at 2 Nov 2026 06:00 (just charged): 20 cells read; the profile has 24 (give all of them, or one for a pilot-cell reading).")]


def test_importing_the_same_file_twice_stores_it_once(battery, crew):
    text = HEADER + inspection_rows()
    run(text, crew)
    second = run(text, crew)
    assert Inspection.objects.count() == 1
    assert second.inspections_already_stored == 1


def test_a_dry_run_stores_nothing(battery, crew):
    report = run(HEADER + inspection_rows(), crew, dry_run=True)
    assert report.ok and report.inspections_created == 1
    assert Inspection.objects.count() == 0


def test_another_sites_battery_is_unknown_to_the_upload_page(crew_client, other_battery):
    upload = io.BytesIO((HEADER + inspection_rows(serial="OT-001")).encode())
    upload.name = "readings.csv"
    response = crew_client.post(reverse("readings:import"), {"file": upload}, follow=True)
    assert "no battery with serial “OT-001” at your sites" in response.content.decode()
    assert Inspection.objects.count() == 0


def test_the_command_imports_and_refuses_bad_files(battery, crew, tmp_path):
    good = tmp_path / "good.csv"
    good.write_text(HEADER + inspection_rows())
    call_command("import_readings", str(good), "--user", crew.username)
    assert Inspection.objects.count() == 1
    bad = tmp_path / "bad.csv"
    bad.write_text(HEADER + inspection_rows(taken="2026-11-09T06:00", cells=3))
    with pytest.raises(CommandError, match="Nothing imported"):
        call_command("import_readings", str(bad), "--user", crew.username)
    assert Inspection.objects.count() == 1


def test_the_export_reimports_to_the_same_readings(crew_client, battery, crew):
    run(HEADER + inspection_rows(temp="31"), crew)
    exported = crew_client.get(reverse("readings:export_csv", args=[battery.pk])).content.decode()
    assert exported.splitlines()[0] == "serial,taken_at,situation,cell,sg,temp_c,volts,level,sg_corrected,inspection_soc_percent"
    Inspection.objects.all().delete()
    report = run(exported, crew)
    assert report.ok
    assert set(CellReading.objects.values_list("sg_corrected", flat=True)) == {Decimal("1.284")}


@pytest.mark.parametrize("bad", ["NaN", "inf", "-Infinity", "sNaN"])
def test_a_non_finite_number_is_reported_not_crashed_on(battery, crew, bad):
    report = run(HEADER + inspection_rows().replace(",25,", f",{bad},", 1), crew)
    assert report.errors == [(2, f"temp “{bad}” is not a number.")]
    assert Inspection.objects.count() == 0


def test_rows_that_name_the_same_reading_in_other_words_are_one_inspection(battery, crew):
    # "Just charged" is the label of "charged", and 06:00 written with its offset is the same moment
    # (the test site is in London, on UTC in November): twelve rows each way are one 24-cell reading, none of them dropped.
    text = HEADER + "".join(
        f"TW-001,{'2026-11-02T06:00' if n % 2 else '2026-11-02T06:00+00:00'},"
        f"{'charged' if n % 2 else 'Just charged'},{n},1.280,25,,ok\n"
        for n in range(1, 25)
    )
    report = run(text, crew)
    assert report.ok and report.inspections_created == 1 and report.cells_created == 24
    assert list(Inspection.objects.get().cells.order_by("position").values_list("position", flat=True)) == list(range(1, 25))


def test_a_short_row_counts_its_missing_columns_as_empty(battery, crew):
    report = run(HEADER + "TW-001,2026-11-02T06:00,charged,1,1.280\n", crew)
    assert report.errors == [(2, "sg given without temp.")]


def test_notes_and_every_summary_field_arrive_as_computed(battery, crew):
    # Stored with COPY on PostgreSQL and bulk_create elsewhere: both give the same row.
    run(HEADER + inspection_rows(sg="1.280", temp="30"), crew)
    stored = Inspection.objects.get()
    # 1.280 at 30 °C corrects to 1.280 + 0.0007 × 5 = 1.2835 -> 1.284 (the profile's 25 °C reference).
    assert (stored.sg_mean, stored.sg_spread, stored.temp_c) == (Decimal("1.284"), Decimal("0.000"), Decimal("30.0"))
    assert stored.notes == "Imported from CSV" and stored.taken_by == crew and stored.is_current
    assert stored.recorded_at is not None and stored.deleted_at is None and stored.supersedes is None
    assert stored.cells.count() == 24


def test_a_superscript_digit_is_not_a_cell_number(battery, crew):
    # str.isdigit() accepts "²" but int() refuses it: the check must not crash on it.
    report = run(HEADER + "TW-001,2026-11-02T06:00,charged,²,1.280,25,,ok\n", crew)
    assert report.errors == [(2, "cell “²” is not a whole number.")]


def test_the_garbage_collectors_setting_is_raised_while_importing_and_restored_after(battery, crew):
    before = gc.get_threshold()
    during = []
    run(HEADER + inspection_rows(), crew, progress=lambda report: during.append(gc.get_threshold()))
    assert during == [(csv_io.IMPORT_GC_THRESHOLD, *before[1:])] and gc.get_threshold() == before

    def fail(report):
        raise OSError("disk full")

    with pytest.raises(OSError):
        run(HEADER + inspection_rows(taken="2026-11-03T06:00"), crew, progress=fail)
    assert gc.get_threshold() == before and Inspection.objects.count() == 1

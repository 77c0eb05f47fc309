"""A battery's readings as CSV: a serial can neither run as a formula nor break the download's name."""
import csv
import datetime as dt
import io
from decimal import Decimal

from django.urls import reverse
from django.utils import timezone

from fleetcare.fleet.models import Battery
from fleetcare.readings.services import CellEntry, record_inspection
from fleetcare.spreadsheets import before_inert, csv_value, inert_text, safe_filename


def test_a_formula_serial_is_exported_as_inert_text_under_a_clean_file_name(crew_client, crew, battery):
    Battery.objects.filter(pk=battery.pk).update(serial='=HYPERLINK("https://evil.example/";"B02")\r\n"x')
    battery.refresh_from_db()
    cells = [CellEntry(position=p, sg=Decimal("1.280")) for p in range(1, battery.profile.positions + 1)]
    record_inspection(battery=battery, user=crew, taken_at=timezone.now() - dt.timedelta(hours=2),
                      situation="charged", cells=cells, temp_c=Decimal("-5.0"))
    response = crew_client.get(reverse("readings:export_csv", args=[battery.pk]))
    assert response.status_code == 200
    assert response["Content-Disposition"] == 'attachment; filename="readings-HYPERLINK-https-evil.example-B02-x.csv"'
    rows = list(csv.reader(io.StringIO(response.content.decode())))
    assert {row[0] for row in rows[1:]} == {"'" + battery.serial}
    assert {row[5] for row in rows[1:]} == {"-5.0"}  # a negative temperature stays a number


def test_csv_value_neutralises_only_text():
    assert [csv_value(v) for v in ("=1+1", "+1", "-x", "@x", "\tx", "\rx", "x=1", "")] == [
        "'=1+1", "'+1", "'-x", "'@x", "'\tx", "'\rx", "x=1", ""]
    assert [csv_value(v) for v in (Decimal("-1.5"), -2, -0.25, None, dt.date(2026, 1, 2))] == [
        "-1.5", "-2", "-0.25", "", "2026-01-02"]


def test_download_names_keep_only_safe_characters():
    assert safe_filename('readings-"; filename=evil.exe.csv') == "readings-filename-evil.exe.csv"
    assert safe_filename("../../etc/passwd") == "etc-passwd"
    assert safe_filename('"""') == "export"


def test_what_the_export_neutralised_reads_back_as_it_was():
    for text in ("=1+1", "+1", "-TW-001", "@x", "\tx"):
        assert before_inert(inert_text(text)) == text
    for text in ("TW-001", "'TW-001", "x=1", ""):  # not made by inert_text: taken as written
        assert before_inert(text) is None

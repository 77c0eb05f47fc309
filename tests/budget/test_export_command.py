import csv
import io
from decimal import Decimal

import pytest
from django.core.management import call_command
from django.core.management.base import CommandError
from openpyxl import load_workbook

from fleetcare.budget import selectors
from fleetcare.fleet.models import Battery


def test_it_writes_an_xlsx_for_every_site(world, tmp_path):
    out = tmp_path / "budget.xlsx"
    call_command("export_budget", "--years", "5", "--format", "xlsx", "-o", str(out), stdout=io.StringIO())
    wb = load_workbook(out, data_only=True)
    serials = {row[3] for row in wb["Batteries"].iter_rows(min_row=2, values_only=True) if row[0] != "Total"}
    assert serials == {"TW-AGE", "TW-CAP", "TW-CELL", "OT-AGE"}  # every site; never the retired tray
    budget, _ = selectors.replacement_budget(Battery.objects.all(), years=5)
    total = next(r for r in wb["By quarter"].iter_rows(values_only=True) if r[0] == "Total")
    assert round(total[4], 2) == float(budget.total)


def test_it_writes_one_sites_csv(world, tmp_path):
    out = tmp_path / "budget.csv"
    call_command("export_budget", "--years", "2", "--format", "csv", "-o", str(out), "--site", "other",
                 stdout=io.StringIO())
    rows = list(csv.reader(out.open(encoding="utf-8")))
    assert ["Covers", "site other"] in rows
    assert ["Horizon (years)", "2"] in rows
    serials = {r[3] for r in rows if len(r) > 4 and r[3] in {"TW-AGE", "TW-CAP", "TW-CELL", "OT-AGE"}}
    assert serials == {"OT-AGE"}
    total = next(r for r in rows if r and r[0] == "Total")
    budget, _ = selectors.replacement_budget(Battery.objects.filter(site__code="other"), years=2)
    assert Decimal(total[4]) == budget.total


def test_it_rejects_an_unknown_site(db, tmp_path):
    with pytest.raises(CommandError, match="No site"):
        call_command("export_budget", "-o", str(tmp_path / "x.csv"), "--format", "csv", "--site", "nowhere")

"""The manager downloads the replacement budget as XLSX from /budget/ and the file opens."""
import pytest
from openpyxl import load_workbook

from tests.browser.pages import ARTIFACTS, screenshot, sign_in

pytestmark = pytest.mark.browser

XLSX_LINK = "a[href*='xlsx'], a:has-text('XLSX'), button:has-text('XLSX'), a:has-text('Excel'), button:has-text('Excel')"


def test_it_downloads_a_budget_xlsx_that_opens(tablet, manager, battery, sealed_battery):
    page = tablet
    sign_in(page, "manager1")
    response = page.goto("/budget/")
    if response.status != 200:
        pytest.fail(f"the budget page /budget/ answered {response.status}: the budget export is not there yet", pytrace=False)
    links = page.locator(XLSX_LINK)
    if not links.count():
        pytest.fail("the budget page has no XLSX export link or button yet", pytrace=False)
    screenshot(page, "manager-budget")
    with page.expect_download() as info:
        links.first.click()
    download = info.value
    ARTIFACTS.mkdir(parents=True, exist_ok=True)
    path = ARTIFACTS / (download.suggested_filename or "budget.xlsx")
    download.save_as(str(path))
    assert path.suffix == ".xlsx"

    workbook = load_workbook(path, read_only=True)
    cells = [str(v) for sheet in workbook.worksheets for row in sheet.iter_rows(values_only=True) for v in row if v is not None]
    assert workbook.worksheets
    assert "TW-001" in cells or any("TW-001" in c for c in cells)

"""The budget as CSV and as an XLSX workbook: the same rows as the screen, numbers as numbers, dates as dates.

The workbook has three sheets: Assumptions, By quarter (one row per calendar quarter and fiscal
year, then fiscal-year totals and the grand total) and Batteries (one row per budgeted event).
The CSV holds the same three tables one after the other, each under its own heading row.
"""
import csv
import io
from datetime import date

from openpyxl import Workbook
from openpyxl.styles import Font
from openpyxl.utils import get_column_letter

from fleetcare.budget.forecast import EVIDENCE_LABELS

DATE_FORMAT = "yyyy-mm-dd"
MONEY_FORMAT = "#,##0.00"
MONTHS = ("January", "February", "March", "April", "May", "June", "July", "August", "September", "October",
          "November", "December")


def assumption_rows(budget, assumptions, scope):
    money = budget.money
    return [
        ("Built on", budget.today),
        ("Horizon (years)", budget.years),
        ("Horizon ends before", budget.end),
        ("Covers", scope),
        ("Currency", assumptions.currency or "(not set)"),
        ("Unit price", "each battery profile's unit price, or its budget price where one is set"),
        ("Installation", "the amount below, or the profile's own where one is set"),
        ("A charge counts as", "depth of discharge / 80 % of a design cycle (depth logged before charging, else the "
                               "profile's typical depth, else 80 %)"),
        ("Installation per battery", float(money.installation)),
        ("Scrap-lead credit per kg", float(money.scrap_credit_per_kg)),
        ("Yearly price escalation (%)", float(money.escalation_percent)),
        ("Replacement cost per cell", float(money.cell_cost)),
        ("Fiscal year starts", MONTHS[money.fiscal_year_start_month - 1]),
        ("Fiscal year label", "the calendar year the fiscal year ends in"),
        ("Replacements' own replacement budgeted", "yes" if money.include_renewals else "no"),
        *rule_rows(budget),
        ("Cost", "escalated unit price + installation - weight x scrap credit per kg"),
        ("Dates", "a date already past is budgeted on the day the budget is built; 'Overdue since' keeps it"),
    ]


RULE_LABELS = (
    ("capacity_floor_percent", "Replace under corrected capacity (%)"),
    ("sg_drop_allowed", "Average SG after charge short of full charge by (equalize and test)"),
    ("spread_limit", "Spread limit after charge"),
    ("max_cells_for_cell_option", "Cell replacement offered for up to (cells)"),
    ("life_margin_percent", "Range either side of a design-life date (% of life)"),
)


def rule_rows(budget):
    """Each forecast rule as the budget's batteries used it; several values where sites or profiles differ."""
    rows = [("Failing cell", "as the weak-cell finding says: still low after equalizing, or low on consecutive "
                             "post-charge readings")]
    for name, label in RULE_LABELS:
        values = budget.rules_in_force(name)
        rows.append((label, float(values[0]) if len(values) == 1 else
                     "varies by site and profile: " + ", ".join(f"{v:g}" for v in values)))
    return rows


def prices_rows(budget):
    """The unit price each profile in the budget was costed at (its budget price where one is set)."""
    prices = sorted({(fc.facts.profile_name, fc.facts.unit_price, fc.facts.installation, fc.facts.typical_depth_percent)
                     for fc in budget.forecasts}, key=lambda row: row[0])
    rows = []
    for name, price, installation, depth in prices:
        rows.append((f"Unit price: {name}", float(price)))
        if installation is not None:
            rows.append((f"Installation per battery: {name}", float(installation)))
        if depth is not None:
            rows.append((f"Typical depth of discharge (%): {name}", depth))
    return rows


QUARTER_HEADER = ("Quarter", "Quarter starts", "Fiscal year", "Events", "Amount")
FISCAL_HEADER = ("Fiscal year", "Events", "Amount")
LINE_HEADER = (
    "Quarter", "Fiscal year", "Budget date", "Serial", "Site", "Profile", "What", "Decided by", "Evidence",
    "Earliest", "Likely", "Latest", "Overdue since", "Unit price", "Escalated price", "Installation",
    "Scrap credit", "Amount", "Whole battery instead",
)


def quarter_rows(budget):
    return [(q.label, q.start, q.fiscal_year, q.count, float(q.amount)) for q in budget.quarters]


def fiscal_rows(budget):
    return [(f.label, f.count, float(f.amount)) for f in budget.fiscal_years]


def line_rows(budget):
    rows = []
    for ln in budget.lines:
        rows.append((
            ln.quarter, ln.fiscal_year, ln.budget_date, ln.facts.serial, ln.facts.site_code, ln.facts.profile_name,
            ln.label, EVIDENCE_LABELS[ln.decided_by.kind], ln.decided_by.detail, ln.earliest, ln.likely, ln.latest,
            ln.overdue_since, float(ln.unit_price), float(ln.escalated_price), float(ln.installation),
            float(ln.scrap_credit), float(ln.amount),
            None if ln.whole_battery_amount is None else float(ln.whole_battery_amount),
        ))
    return rows


def _sheet(ws, header, rows, money_from=None):
    ws.append(list(header))
    for cell in ws[1]:
        cell.font = Font(bold=True)
    for row in rows:
        ws.append(list(row))
    for row in ws.iter_rows(min_row=2):
        for cell in row:
            if isinstance(cell.value, date):
                cell.number_format = DATE_FORMAT
            elif isinstance(cell.value, float) and money_from is not None and cell.column >= money_from:
                cell.number_format = MONEY_FORMAT
    for i, title in enumerate(header, start=1):
        ws.column_dimensions[get_column_letter(i)].width = max(12, min(48, len(title) + 4))
    ws.freeze_panes = "A2"


def to_xlsx(budget, assumptions, scope):
    wb = Workbook()
    ws = wb.active
    ws.title = "Assumptions"
    _sheet(ws, ("Assumption", "Value"), assumption_rows(budget, assumptions, scope) + prices_rows(budget))
    ws.column_dimensions["A"].width = 52
    ws.column_dimensions["B"].width = 60

    ws = wb.create_sheet("By quarter")
    _sheet(ws, QUARTER_HEADER, quarter_rows(budget), money_from=5)
    ws.append([])
    ws.append(list(FISCAL_HEADER))
    ws.cell(ws.max_row, 1).font = Font(bold=True)
    for label, count, amount in fiscal_rows(budget):
        ws.append([label, count, amount])
        ws.cell(ws.max_row, 3).number_format = MONEY_FORMAT
    ws.append([])
    ws.append(["Total", None, None, budget.count, float(budget.total)])
    ws.cell(ws.max_row, 1).font = Font(bold=True)
    ws.cell(ws.max_row, 5).number_format = MONEY_FORMAT

    ws = wb.create_sheet("Batteries")
    _sheet(ws, LINE_HEADER, line_rows(budget), money_from=14)
    out = io.BytesIO()
    wb.save(out)
    return out.getvalue()


def _csv_value(value):
    if isinstance(value, date):
        return value.isoformat()
    if isinstance(value, float):
        return ("%.6f" % value).rstrip("0").rstrip(".")
    return "" if value is None else value


def to_csv(budget, assumptions, scope):
    out = io.StringIO()
    w = csv.writer(out)

    def table(title, header, rows):
        w.writerow([title])
        w.writerow(header)
        for row in rows:
            w.writerow([_csv_value(v) for v in row])
        w.writerow([])

    table("Assumptions", ("Assumption", "Value"), assumption_rows(budget, assumptions, scope) + prices_rows(budget))
    table("By quarter", QUARTER_HEADER, quarter_rows(budget) + [("Total", "", "", budget.count, float(budget.total))])
    table("By fiscal year", FISCAL_HEADER, fiscal_rows(budget))
    table("Batteries", LINE_HEADER, line_rows(budget))
    return out.getvalue()

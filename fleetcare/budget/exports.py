"""The budget as CSV and as an XLSX workbook: the same rows as the screen, numbers as numbers, dates as dates.

The workbook has one table per sheet: Assumptions, By quarter (one row per calendar quarter and fiscal year),
By fiscal year, and Batteries (one row per budgeted event). Each event's amount, each quarter's and fiscal
year's events and amount, and every total are formulas over the Batteries rows, written with the value the
screen shows, so the totals follow when finance edits a row. Money headers and formats carry the currency.
The CSV holds the same four tables one after the other, each under its own heading row.
Every cell goes through fleetcare.spreadsheets, so no text can become a formula.
"""
import io
import re
from datetime import date

import xlsxwriter
from xlsxwriter.utility import xl_col_to_name

from fleetcare.budget.forecast import EVIDENCE_LABELS
from fleetcare.spreadsheets import CsvWriter, Formula, write_xlsx_row

DATE_FORMAT = "yyyy-mm-dd"
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
LINE_MONEY = range(13, 19)  # Unit price .. Whole battery instead
LINE_DATES = (2, 9, 10, 11, 12)
MONEY_ASSUMPTIONS = ("Installation per battery", "Scrap-lead credit per kg", "Replacement cost per cell", "Unit price: ")


def money_header(title, currency):
    return f"{title} ({currency})" if currency else title


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


def _money_format(currency):
    """#,##0.00 with the currency after it, e.g. 1,234.50 GBP; only letters and symbols of it reach the format."""
    shown = re.sub(r'["\\;\[\]]', "", currency or "").strip()
    return f'#,##0.00 "{shown}"' if shown else "#,##0.00"


class _Book:
    def __init__(self, out, currency):
        self.wb = xlsxwriter.Workbook(out, {"in_memory": True, "strings_to_formulas": False,
                                            "strings_to_numbers": False, "strings_to_urls": False})
        self.bold = self.wb.add_format({"bold": True})
        self.date = self.wb.add_format({"num_format": DATE_FORMAT})
        self.money = self.wb.add_format({"num_format": _money_format(currency)})
        self.money_bold = self.wb.add_format({"num_format": _money_format(currency), "bold": True})
        self.currency = currency

    def sheet(self, name, header, widths=None):
        ws = self.wb.add_worksheet(name)
        write_xlsx_row(ws, 0, header, {c: self.bold for c in range(len(header))})
        for col, title in enumerate(header):
            ws.set_column(col, col, (widths or {}).get(col, max(12, min(48, len(title) + 4))))
        ws.freeze_panes(1, 0)
        return ws


def _col(index):
    return xl_col_to_name(index)


def to_xlsx(budget, assumptions, scope):
    out = io.BytesIO()
    currency = assumptions.currency
    book = _Book(out, currency)

    ws = book.sheet("Assumptions", ("Assumption", "Value"), widths={0: 52, 1: 60})
    for r, (label, value) in enumerate(assumption_rows(budget, assumptions, scope) + prices_rows(budget), start=1):
        if isinstance(value, float) and label.startswith(MONEY_ASSUMPTIONS):
            fmt = book.money
        else:
            fmt = book.date if isinstance(value, date) else None
        write_xlsx_row(ws, r, (label, value), {1: fmt})

    lines = line_rows(budget)
    n = len(lines)
    first, last = 2, n + 1  # the Batteries rows, 1-based as the formulas name them

    def column(index):
        letter = _col(index)
        return f"Batteries!${letter}${first}:${letter}${last}"

    quarter_col, fiscal_col, serial_col, amount_col = column(0), column(1), column(3), column(17)

    ws = book.sheet("By quarter", QUARTER_HEADER[:4] + (money_header("Amount", currency),))
    for r, (label, start, fy, count, amount) in enumerate(quarter_rows(budget), start=1):
        row = r + 1
        if n:
            events = Formula(f"=COUNTIFS({quarter_col},A{row},{fiscal_col},C{row})", count)
            subtotal = Formula(f"=SUMIFS({amount_col},{quarter_col},A{row},{fiscal_col},C{row})", amount)
        else:
            events, subtotal = count, amount
        write_xlsx_row(ws, r, (label, start, fy, events, subtotal), {1: book.date, 4: book.money})
    _total_row(ws, book, len(budget.quarters) + 1, {3: budget.count, 4: float(budget.total)}, money_cols=(4,))

    ws = book.sheet("By fiscal year", FISCAL_HEADER[:2] + (money_header("Amount", currency),))
    for r, (label, count, amount) in enumerate(fiscal_rows(budget), start=1):
        row = r + 1
        if n:
            events = Formula(f"=COUNTIFS({fiscal_col},A{row})", count)
            subtotal = Formula(f"=SUMIFS({amount_col},{fiscal_col},A{row})", amount)
        else:
            events, subtotal = count, amount
        write_xlsx_row(ws, r, (label, events, subtotal), {2: book.money})
    _total_row(ws, book, len(budget.fiscal_years) + 1, {1: budget.count, 2: float(budget.total)}, money_cols=(2,))

    header = tuple(money_header(t, currency) if i in LINE_MONEY else t for i, t in enumerate(LINE_HEADER))
    ws = book.sheet("Batteries", header)
    formats = {**{c: book.date for c in LINE_DATES}, **{c: book.money for c in LINE_MONEY}}
    for r, values in enumerate(lines, start=1):
        row = r + 1
        values = list(values)
        values[17] = Formula(f"=O{row}+P{row}-Q{row}", values[17])  # escalated price + installation - scrap credit
        write_xlsx_row(ws, r, values, formats)
    _total_row(ws, book, n + 1, {3: budget.count, 17: float(budget.total)}, money_cols=(17,),
               count_of=serial_col.split("!")[1])
    book.wb.close()
    return out.getvalue()


def _total_row(ws, book, r, values, money_cols, count_of=None):
    """The Total row under a table at 0-based row r: each given column summed over the rows above it."""
    write_xlsx_row(ws, r, ("Total",), {0: book.bold})
    for col, value in values.items():
        letter = _col(col)
        if r <= 1:
            formula = value
        elif count_of is not None and col not in money_cols:
            formula = Formula(f"=COUNTA({count_of})", value)
        else:
            formula = Formula(f"=SUM({letter}2:{letter}{r})", value)
        write_xlsx_row(ws, r, [formula], {0: book.money_bold if col in money_cols else book.bold}, first_col=col)


def to_csv(budget, assumptions, scope):
    out = io.StringIO()
    w = CsvWriter(out)
    currency = assumptions.currency

    def table(title, header, rows):
        w.writerow([title])
        w.writerow(header)
        w.writerows(rows)
        w.writerow([])

    table("Assumptions", ("Assumption", "Value"), assumption_rows(budget, assumptions, scope) + prices_rows(budget))
    table("By quarter", QUARTER_HEADER[:4] + (money_header("Amount", currency),),
          quarter_rows(budget) + [("Total", None, None, budget.count, float(budget.total))])
    table("By fiscal year", FISCAL_HEADER[:2] + (money_header("Amount", currency),),
          fiscal_rows(budget) + [("Total", budget.count, float(budget.total))])
    table("Batteries", tuple(money_header(t, currency) if i in LINE_MONEY else t for i, t in enumerate(LINE_HEADER)),
          line_rows(budget))
    return out.getvalue()

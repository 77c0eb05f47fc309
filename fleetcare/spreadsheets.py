"""The one way FleetCare writes an exported cell (CSV or XLSX) and names a download.

Text that begins with = + - @ tab or carriage return is read as a formula by spreadsheet programs, so a serial
typed as `=HYPERLINK(...)` could run in a manager's spreadsheet. Every text cell goes through `inert_text`,
which puts a single quote in front of such text; in XLSX text is also written as a text cell, never a formula.
Numbers and dates stay numbers and dates (a negative amount is a number, not text).
Source: OWASP, "CSV Injection" (owasp.org/www-community/attacks/CSV_Injection).
"""
import csv
import datetime as dt
import re
from decimal import Decimal

from django.utils.http import content_disposition_header

FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")


def inert_text(text):
    text = str(text)
    return "'" + text if text.startswith(FORMULA_STARTS) else text


def before_inert(text):
    """The text `inert_text` was given, when `text` is what it made of it ("'=B02" -> "=B02"), else None: how an
    import reads back a value our own export neutralised."""
    if text.startswith("'") and text[1:].startswith(FORMULA_STARTS):
        return text[1:]
    return None


def csv_value(value):
    """A value as CSV text: numbers and dates as written, text made inert, nothing as an empty cell."""
    if value is None:
        return ""
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, (dt.date, dt.datetime)):
        return value.isoformat()
    if isinstance(value, float):
        return ("%.6f" % value).rstrip("0").rstrip(".")
    if isinstance(value, (int, Decimal)):
        return str(value)
    return inert_text(value)


class CsvWriter:
    """csv.writer whose every row goes through csv_value."""

    def __init__(self, out):
        self._writer = csv.writer(out)

    def writerow(self, values):
        return self._writer.writerow([csv_value(v) for v in values])

    def writerows(self, rows):
        for row in rows:
            self.writerow(row)


def safe_filename(name, fallback="export"):
    """A download name of letters, digits, dot, dash and underscore only: quotes, slashes and control
    characters from a serial or a site code cannot break the Content-Disposition header or the path."""
    cleaned = re.sub(r"-{2,}", "-", re.sub(r"[^A-Za-z0-9._-]+", "-", name)).strip("-.")
    return cleaned or fallback


def attach(response, filename):
    """Mark a response as a download named `filename` (sanitised)."""
    response["Content-Disposition"] = content_disposition_header(True, safe_filename(filename))
    return response


class Formula:
    """A formula cell for `write_xlsx_row`, with the value it has when written (what the screen shows)."""

    def __init__(self, text, value):
        self.text = text
        self.value = value


def write_xlsx_row(worksheet, row, values, formats=None, first_col=0):
    """Write one row with XlsxWriter: text always as text (made inert), numbers as numbers, dates as dates.

    `formats` maps a value's index to an XlsxWriter format; `Formula` values are written with their cached result.
    """
    formats = formats or {}
    for index, value in enumerate(values):
        col, fmt = first_col + index, formats.get(index)
        if value is None:
            worksheet.write_blank(row, col, None, fmt)
        elif isinstance(value, Formula):
            worksheet.write_formula(row, col, value.text, fmt, value.value)
        elif isinstance(value, bool):
            worksheet.write_string(row, col, "yes" if value else "no", fmt)
        elif isinstance(value, (int, float, Decimal)):
            worksheet.write_number(row, col, float(value), fmt)
        elif isinstance(value, (dt.date, dt.datetime)):
            worksheet.write_datetime(row, col, value, fmt)
        else:
            worksheet.write_string(row, col, inert_text(value), fmt)

"""Numbers with their nouns, and dates, as a person reads them: one place for every page, file and command.

`count(1, "day")` is "1 day", `count(3, "day")` "3 days", `count(2, "battery", "batteries")` "2 batteries".
Dates have one style everywhere: `day` (3 Dec 2026), `moment` (3 Dec 2026 14:05), `weekday` (Thu 3 Dec),
`weekday_time` (Thu 3 Dec 14:05), `month` (Dec 2026), `clock` (14:05). Templates use the filters of the same
names (fleetcare/fleet/templatetags/words.py, built into every template, with the formats below); Python code
calls these functions, plain Python that writes the same (tests/test_words.py holds them together).
"""
import datetime as dt
import re

DAY = "j M Y"
MOMENT = "j M Y H:i"
WEEKDAY = "D j M"
WEEKDAY_TIME = "D j M H:i"
MONTH = "M Y"
CLOCK = "H:i"


def count(number, noun, plural=None):
    """'1 day', '2 days', '1.5 hours'; `plural` where adding an s is wrong ('batteries')."""
    word = noun if number == 1 else (plural or f"{noun}s")
    shown = f"{number:,}" if isinstance(number, int) else f"{number:g}"
    return f"{shown} {word}"


def day(value):
    return f"{value.day} {value:%b %Y}" if value else ""


def moment(value):
    """A moment as its clock shows it (give it a local time: see fleet.site_time.local)."""
    return f"{value.day} {value:%b %Y %H:%M}" if value else ""


def weekday_time(value):
    return f"{value:%a} {value.day} {value:%b %H:%M}" if value else ""


_ISO_DATE = re.compile(r"\b(\d{4})-(\d{2})-(\d{2})\b")


def iso_dates_in_words(text):
    """'last on 2026-10-12' reads 'last on 12 Oct 2026' (the planner and the findings write ISO dates)."""

    def in_words(match):
        try:
            return day(dt.date(*map(int, match.groups())))
        except ValueError:
            return match.group(0)

    return _ISO_DATE.sub(in_words, str(text))


def sentence(text):
    """Text as a whole sentence: a capital first letter and a full stop at the end."""
    text = " ".join(str(text).split())
    if not text:
        return ""
    text = text[0].upper() + text[1:]
    return text if text[-1] in ".!?" else text + "."

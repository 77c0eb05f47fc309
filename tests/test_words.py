"""Words are whole and dates have one style: fleetcare/words.py and the template filters built on it."""
import datetime as dt
import re
from pathlib import Path

import pytest
from django.template import Context, Template

from fleetcare import words

ROOT = Path(__file__).resolve().parent.parent


@pytest.mark.parametrize("number, noun, plural, expected", [
    (1, "day", None, "1 day"), (0, "day", None, "0 days"), (2, "day", None, "2 days"),
    (1, "battery", "batteries", "1 battery"), (36, "battery", "batteries", "36 batteries"),
    (1500, "row", None, "1,500 rows"), (1.5, "hour", None, "1.5 hours"),
])
def test_a_count_says_its_noun_whole(number, noun, plural, expected):
    assert words.count(number, noun, plural) == expected


def test_the_filters_and_the_functions_write_the_same_dates():
    when = dt.datetime(2026, 3, 5, 7, 4)
    shown = Template("{{ d|day }}|{{ d|moment }}|{{ d|weekday }}|{{ d|weekday_time }}|{{ d|month }}|{{ d|clock }}|"
                     "{{ t|clock }}").render(Context({"d": when, "t": dt.time(22, 0)}))
    assert shown == "5 Mar 2026|5 Mar 2026 07:04|Thu 5 Mar|Thu 5 Mar 07:04|Mar 2026|07:04|22:00"
    assert shown.split("|")[:2] == [words.day(when), words.moment(when)]
    assert shown.split("|")[3] == words.weekday_time(when)


def test_iso_dates_read_in_words_and_a_reason_reads_as_a_sentence():
    assert words.iso_dates_in_words("last on 2026-10-02; not 2026-13-40") == "last on 2 Oct 2026; not 2026-13-40"
    assert words.sentence("watering every 7 days, last on 2 Oct 2026") == "Watering every 7 days, last on 2 Oct 2026."
    assert words.sentence("Done.") == "Done."


def test_no_template_writes_a_date_format_of_its_own():
    """Every date on screen goes through |day, |moment, |weekday, |weekday_time, |month or |clock; only a form
    box's value (the browser's own format) may name one."""
    stray = []
    for path in sorted((ROOT / "templates").rglob("*.html")) + sorted((ROOT / "fleetcare").rglob("templates/**/*.html")):
        for number, line in enumerate(path.read_text().splitlines(), 1):
            for match in re.finditer(r"\|(date|time)\b(:\S+)?", line):
                if not re.search(r'value="[^"]*$', line[:match.start()]):
                    stray.append(f"{path.relative_to(ROOT)}:{number}: {match.group(0)}")
    assert stray == []


def test_no_message_hedges_a_plural_with_parentheses():
    """'1 days' and 'reading(s)' are not whole words: counts go through words.count or |pluralize."""
    hedged = []
    for path in sorted((ROOT / "fleetcare").rglob("*.py")):
        if "migrations" in path.parts:
            continue
        for number, line in enumerate(path.read_text().splitlines(), 1):
            if re.search(r'f"[^"]*[a-z]\(s\)', line) or re.search(r'f"[^"]*\{[^}]+\} days\b', line):
                hedged.append(f"{path.relative_to(ROOT)}:{number}")
    assert hedged == []

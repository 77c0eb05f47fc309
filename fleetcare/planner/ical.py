"""The site's plan as an iCalendar file (RFC 5545): UTC times, escaped text, lines folded at 75 octets, CRLF."""
import datetime as dt

from fleetcare import words
from fleetcare.fleet import site_time

PRODID = "-//FleetCare//Equalizing and watering plan//EN"
TITLES = {"equalize": "Equalizing charge", "water": "Water"}


def escape(text):
    return (str(text).replace("\\", "\\\\").replace(";", "\\;").replace(",", "\\,")
            .replace("\r\n", "\\n").replace("\n", "\\n"))


def fold(line):
    """Split a content line into chunks of at most 75 octets, continuation lines starting with one space."""
    raw = line.encode("utf-8")
    if len(raw) <= 75:
        return [line]
    parts, current, limit = [], b"", 75
    for char in line:
        encoded = char.encode("utf-8")
        if len(current) + len(encoded) > limit:
            parts.append(current.decode("utf-8"))
            current, limit = b"", 74  # the leading space counts
        current += encoded
    parts.append(current.decode("utf-8"))
    return [parts[0]] + [" " + p for p in parts[1:]]


def utc(value):
    return value.astimezone(dt.UTC).strftime("%Y%m%dT%H%M%SZ")


def _site_clock_note(start, end, site):
    """The times as the site's clocks show them, for a reader whose calendar is set to another zone."""
    start, end = site_time.local(start, site), site_time.local(end, site)
    return f"Site time {words.weekday_time(start)}–{end:%H:%M} {end:%Z} ({site_time.zone_of(site).key}). "


def _why(reason):
    """The planner's reason as whole sentences, its dates in words: 'Equalizing every 7 days, last on 21 Mar 2026.'"""
    return words.sentence(words.iso_dates_in_words(reason))


def calendar(site, plan, serials, built_at, host="fleetcare"):
    """The .ics text for a plan whose tasks carry naive site-local times."""
    lines = ["BEGIN:VCALENDAR", "VERSION:2.0", f"PRODID:{PRODID}", "CALSCALE:GREGORIAN", "METHOD:PUBLISH",
             f"X-WR-CALNAME:{escape('FleetCare plan: ' + site.name)}", f"X-WR-TIMEZONE:{site_time.zone_of(site).key}"]
    stamp = utc(built_at)
    for task in plan.tasks:
        start = site_time.planned_moment(task.start, site)
        end = site_time.planned_moment(task.end, site)
        serial = serials.get(task.battery_id, task.serial)
        summary = f"{TITLES.get(task.kind, task.kind)}: {serial}"
        if task.days_overdue:
            summary += f" ({words.count(task.days_overdue, 'day')} overdue)"
        lines += [
            "BEGIN:VEVENT",
            f"UID:{task.kind}-{task.battery_id}-{task.day:%Y%m%d}@{site.code}.{host}",
            f"DTSTAMP:{stamp}",
            f"DTSTART:{utc(start)}",
            f"DTEND:{utc(end)}",
            f"SUMMARY:{escape(summary)}",
            f"DESCRIPTION:{escape(_site_clock_note(start, end, site) + _why(task.reason))}",
            "TRANSP:TRANSPARENT",
            "END:VEVENT",
        ]
    lines.append("END:VCALENDAR")
    return "".join(part + "\r\n" for line in lines for part in fold(line))

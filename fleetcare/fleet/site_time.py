"""One clock per site: every time a person types or reads is in the zone of the site its object belongs to.

`zone_of(obj)` is the one answer to "which zone is this in?" for a site, battery, charging room, reading,
top-up, finding, equalizing charge or anything else that leads to a site through `site`, `battery`,
`inspection`, `charge` or `charging_room`. Pages, forms, exports, the API and the CSV import all ask it.

Typed local times (no offset) become moments with `to_moment(naive, obj)`:
- a time the clocks skipped (spring forward) is refused with `NonexistentLocalTime`, a message for the
  person, never guessed;
- a time the clocks showed twice (fall back) is the later of the two moments if that moment has already
  passed, else the earlier one: someone typing the time on their clock during or after the repeated hour
  means the recent one, and a repeated time is never put in the future while one of its moments has passed.
"""
import datetime as dt
import zoneinfo
from contextlib import contextmanager

from django import forms
from django.forms.fields import BaseTemporalField
from django.utils import timezone
from django.utils.dateparse import parse_datetime

_PATHS = ("battery", "inspection", "charge", "charging_room", "room")


class NonexistentLocalTime(ValueError):
    """A local time the site's clocks never showed (they jumped past it)."""


def site_of(obj):
    """The site an object belongs to (the object itself if it is a site)."""
    from fleetcare.fleet.models import Site

    for _ in range(6):
        if isinstance(obj, Site):
            return obj
        path = next((p for p in ("site", *_PATHS) if hasattr(obj, p)), None)
        if path is None:
            break
        obj = getattr(obj, path)
    raise ValueError(f"{obj!r} does not belong to a site.")


def zone_of(obj):
    """The time zone of the site `obj` belongs to (a ZoneInfo); accepts a ZoneInfo as it is."""
    if isinstance(obj, dt.tzinfo):
        return obj
    return zoneinfo.ZoneInfo(site_of(obj).timezone)


def zone_label(obj, moment=None):
    """The zone as people read it beside a time: 'CST (America/Chicago)'; the abbreviation of `moment`."""
    zone = zone_of(obj)
    moment = moment or timezone.now()
    return f"{moment.astimezone(zone).tzname()} ({zone.key})"


def local(moment, obj):
    """An aware moment as the site's clocks showed it (aware, in the site's zone); None stays None."""
    if moment is None:
        return None
    return moment.astimezone(zone_of(obj))


def now_at(obj):
    """Now on the site's clocks, to the minute: the default of every time box."""
    return local(timezone.now(), obj).replace(second=0, microsecond=0)


def today_at(obj):
    return local(timezone.now(), obj).date()


def to_moment(naive, obj, *, now=None):
    """A local time typed at the site (naive) as an aware moment; see the module docstring for DST rules."""
    zone = zone_of(obj)
    earlier = naive.replace(tzinfo=zone, fold=0)
    later = naive.replace(tzinfo=zone, fold=1)
    if _wall(earlier, zone) != naive:
        where = f"in {zone.key}" if isinstance(obj, dt.tzinfo) else f"at {site_of(obj).name} ({zone.key})"
        raise NonexistentLocalTime(
            f"{naive:%H:%M} on {naive.day} {naive:%b %Y} did not happen {where}: the clocks went forward past it. "
            "Enter the time a clock that has changed showed."
        )
    if earlier.utcoffset() != later.utcoffset():
        now = now or timezone.now()
        earlier = later if later <= now else earlier
    return earlier.astimezone(dt.UTC)  # in UTC: a moment inside the repeated hour never compares equal across zones


def planned_moment(naive, obj):
    """A time the planner chose on the site's clock (naive) as a moment, never refused: a planned time in the
    skipped hour lands where the clocks do (02:30 on the spring-forward night is 03:30 summer time) and one in
    the repeated hour is the first of the two."""
    return naive.replace(tzinfo=zone_of(obj), fold=0).astimezone(dt.UTC)


def _wall(aware, zone):
    return aware.astimezone(dt.UTC).astimezone(zone).replace(tzinfo=None)


@contextmanager
def site_clock(obj):
    """Render or parse within the site's zone (Django's current time zone) for a page about one site's things."""
    with timezone.override(zone_of(obj)):
        yield


class SiteDateTimeField(forms.DateTimeField):
    """A time box in the site's local time: shows stored moments on the site's clock, reads typed ones the same way.

    The form sets `field.zone = zone_of(battery)` (or site, room...); without it the field uses the zone
    `site_clock` made current. A value with an offset is taken as written.
    """

    zone = None

    def _zone(self):
        """The form's site (or zone), else the zone site_clock made current."""
        return self.zone if self.zone is not None else timezone.get_current_timezone()

    def prepare_value(self, value):
        if isinstance(value, dt.datetime) and timezone.is_aware(value):
            return value.astimezone(zone_of(self._zone())).replace(tzinfo=None)
        return super().prepare_value(value)

    def to_python(self, value):
        if value in self.empty_values:
            return None
        if isinstance(value, dt.datetime):
            parsed = value
        elif isinstance(value, dt.date):
            parsed = dt.datetime.combine(value, dt.time.min)
        else:
            text = str(value).strip()
            try:
                parsed = parse_datetime(text)
            except ValueError:
                parsed = None
            if parsed is None:
                parsed = BaseTemporalField.to_python(self, text)
        if timezone.is_aware(parsed):
            try:  # a year-1 time with an offset is before year 1 in UTC or in the site's zone
                parsed.astimezone(dt.timezone.utc)
                parsed.astimezone(zone_of(self._zone()))
            except OverflowError as exc:
                raise forms.ValidationError(self.error_messages["invalid"], code="invalid") from exc
            return parsed
        try:
            return to_moment(parsed, self._zone())
        except NonexistentLocalTime as exc:
            raise forms.ValidationError(str(exc), code="nonexistent_time") from exc
        except OverflowError as exc:
            raise forms.ValidationError(self.error_messages["invalid"], code="invalid") from exc

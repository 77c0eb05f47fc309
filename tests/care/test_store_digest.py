"""The findings pass rewrites a finding only when what it shows changed (fleetcare.care.detection._store
compares a digest of the new content with the one stored at the last write)."""
import datetime as dt

from django.db import connection
from django.test.utils import CaptureQueriesContext

from fleetcare.care.models import Finding
from tests.care.helpers import detect, one
from tests.care.test_deep_discharge import pilot

DAY = dt.timedelta(days=1)


def rewrites(queries):
    return [q["sql"] for q in queries if q["sql"].startswith('UPDATE "care_finding"') and '"evidence"' in q["sql"]]


def test_a_changed_finding_is_rewritten_and_an_unchanged_one_is_not(battery, crew, watered, now):
    pilot(battery, crew, now - 3 * DAY, "1.160")
    first = one(detect(battery, now), "deep_discharge")
    assert first.evidence["event_count"] == 1 and first.content_digest

    with CaptureQueriesContext(connection) as queries:
        again = one(detect(battery, now), "deep_discharge")
    assert rewrites(queries.captured_queries) == []
    assert again.pk == first.pk and again.evidence == first.evidence and again.last_seen_at == now

    pilot(battery, crew, now - 2 * DAY, "1.150")
    later = now + dt.timedelta(hours=1)
    with CaptureQueriesContext(connection) as queries:
        changed = one(detect(battery, later), "deep_discharge")
    assert len(rewrites(queries.captured_queries)) == 1
    assert changed.pk == first.pk
    assert changed.evidence["event_count"] == 2 and "2 deep discharges" in changed.summary
    assert changed.content_digest != first.content_digest


def test_a_finding_stored_before_the_digest_is_rewritten_once(battery, crew, watered, now):
    pilot(battery, crew, now - 3 * DAY, "1.160")
    finding = one(detect(battery, now), "deep_discharge")
    Finding.objects.filter(pk=finding.pk).update(content_digest="", summary="as an older version worded it")
    assert one(detect(battery, now), "deep_discharge").summary == finding.summary
    with CaptureQueriesContext(connection) as queries:
        detect(battery, now)
    assert rewrites(queries.captured_queries) == []

"""A finding opens once, stays while readings show it, clears itself when they stop, and keeps its history."""
import datetime as dt

import pytest
from django.db import IntegrityError, transaction

from fleetcare.care.models import Finding
from fleetcare.care.services import acknowledge
from tests.care.helpers import detect, inspect, one, sgs

DAY = dt.timedelta(days=1)


def test_running_detection_again_never_duplicates_an_open_finding(battery, crew, watered, now):
    inspect(battery, crew, now - DAY, cells=sgs(low={9: "1.245"}))
    first = one(detect(battery, now), "weak_cell")
    second = one(detect(battery, now + dt.timedelta(hours=1)), "weak_cell")
    assert second.pk == first.pk
    assert Finding.objects.filter(battery=battery, kind="weak_cell").count() == 1
    second.refresh_from_db()
    assert second.opened_at == now and second.last_seen_at == now + dt.timedelta(hours=1)


def test_it_clears_itself_when_a_later_inspection_no_longer_shows_it(battery, crew, watered, now):
    inspect(battery, crew, now - 2 * DAY, cells=sgs(low={9: "1.245"}))
    finding = one(detect(battery, now - DAY), "weak_cell")
    inspect(battery, crew, now - dt.timedelta(hours=3), situation="equalized", cells=sgs())
    assert detect(battery, now) == []
    finding.refresh_from_db()
    assert finding.state == Finding.State.CLEARED and finding.cleared_at == now


def test_a_fault_that_returns_opens_a_new_finding_and_keeps_the_old_one(battery, crew, watered, now):
    inspect(battery, crew, now - 3 * DAY, cells=sgs(low={9: "1.245"}))
    old = one(detect(battery, now - 3 * DAY), "weak_cell")
    inspect(battery, crew, now - 2 * DAY, cells=sgs())
    detect(battery, now - 2 * DAY)
    inspect(battery, crew, now - DAY, cells=sgs(low={9: "1.244"}))
    new = one(detect(battery, now), "weak_cell")
    assert new.pk != old.pk
    states = dict(Finding.objects.filter(battery=battery, kind="weak_cell").values_list("pk", "state"))
    assert states == {old.pk: "cleared", new.pk: "open"}


def test_an_acknowledged_finding_stays_acknowledged_then_clears(battery, crew, supervisor, watered, now):
    inspect(battery, crew, now - 2 * DAY, cells=sgs(low={9: "1.245"}))
    finding = one(detect(battery, now - DAY), "weak_cell")
    acknowledge(finding, supervisor, "Equalizing on Saturday night shift.")
    again = one(detect(battery, now - dt.timedelta(hours=12)), "weak_cell")
    assert again.pk == finding.pk and again.state == Finding.State.ACKNOWLEDGED
    assert again.acknowledged_comment == "Equalizing on Saturday night shift."
    inspect(battery, crew, now - dt.timedelta(hours=2), situation="equalized", cells=sgs())
    detect(battery, now)
    finding.refresh_from_db()
    assert finding.state == Finding.State.CLEARED and finding.acknowledged_by == supervisor


def test_the_evidence_follows_the_latest_reading(battery, crew, watered, now):
    inspect(battery, crew, now - 2 * DAY, cells=sgs(low={9: "1.245"}))
    detect(battery, now - DAY)
    latest = inspect(battery, crew, now - dt.timedelta(hours=2), cells=sgs(low={9: "1.235"}))
    finding = one(detect(battery, now), "weak_cell")
    assert finding.inspection == latest
    assert finding.evidence["readings"][0]["cells"][0]["below_others_points"] == 50


def test_the_database_refuses_a_second_active_finding_of_a_kind(battery, now):
    Finding.objects.create(battery=battery, kind="ageing", opened_at=now, last_seen_at=now)
    Finding.objects.create(battery=battery, kind="ageing", opened_at=now, last_seen_at=now, state="cleared")
    with pytest.raises(IntegrityError), transaction.atomic():
        Finding.objects.create(battery=battery, kind="ageing", opened_at=now, last_seen_at=now, state="acknowledged")


def test_a_retired_batterys_findings_clear(battery, crew, watered, now):
    inspect(battery, crew, now - DAY, cells=sgs(low={9: "1.245"}))
    finding = one(detect(battery, now), "weak_cell")
    battery.status = "retired"
    battery.save()
    assert detect(battery, now) == []
    finding.refresh_from_db()
    assert finding.state == Finding.State.CLEARED

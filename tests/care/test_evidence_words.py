"""A finding's evidence reads in plain words: situations by their names, dates in the one date style."""
from django.urls import reverse
from django.utils import timezone

from fleetcare.care.models import Finding


def test_evidence_names_the_situation_and_writes_dates_in_words(crew_client, battery):
    now = timezone.now()
    finding = Finding.objects.create(
        battery=battery, kind="left_discharged", opened_at=now, last_seen_at=now, summary="Left discharged",
        evidence={"rule": "r", "thresholds": [], "readings": [
            {"situation": "before_charge", "in_service_date": "2025-09-29", "soc_percent": 46.7}]})
    html = crew_client.get(reverse("care:finding", args=[finding.pk])).content.decode()
    assert "situation: <strong>before charge</strong>" in html
    assert "in service since: <strong>29 Sep 2025</strong>" in html
    assert "before_charge" not in html and "2025-09-29" not in html

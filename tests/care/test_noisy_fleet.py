"""Findings that survive measurement noise, on a seeded generated fleet (tests/care/noisy_fleet.py).

Targets: healthy batteries raise no cell or spread finding; the injected faults (weak cells, sulfation,
deep discharge, over-watering, weak blocks) are all found (recall 1.0) with precision at least 0.9.
The same fleet judged by the rules as they were before (no allowance for the hydrometer, one reading
enough, the any-two-cells rule on every tray) shows why: healthy trays raise spread findings.
"""
import pytest
from django.utils import timezone

from fleetcare.care.detection import detect_for_batteries
from fleetcare.care.models import Policy
from fleetcare.fleet.models import Battery
from tests.care import noisy_fleet

SEED = 20261203


@pytest.fixture
def fleet(crew):
    now = timezone.now().replace(microsecond=0)
    made = noisy_fleet.build(SEED, crew, now)
    return made, now


def _detect(made, now):
    return detect_for_batteries(Battery.objects.filter(pk__in=[g.battery.pk for g in made]), now=now)


def test_healthy_batteries_raise_no_cell_or_spread_finding_and_every_fault_is_found(fleet):
    made, now = fleet
    result = noisy_fleet.score(made, _detect(made, now))
    assert result.batteries == 68 and result.faults == 20
    assert result.healthy_cell_or_spread == []
    assert result.missed == []
    assert result.recall == 1.0
    assert result.precision >= 0.9, result.false_positives


def test_the_old_rules_trip_on_healthy_trays(fleet):
    made, now = fleet
    profiles = {g.battery.profile for g in made}
    for profile in profiles:
        Policy.objects.create(profile=profile, sg_resolution=0, spread_readings_in_a_row=1,
                              cell_gap_rule_max_cells=40)
    result = noisy_fleet.score(made, _detect(made, now))
    assert len(result.healthy_cell_or_spread) >= 5
    assert result.precision < 0.9

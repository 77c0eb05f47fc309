"""Findings that survive measurement noise, on seeded generated fleets (tests/care/noisy_fleet.py).

Targets: healthy batteries raise no cell or spread finding; the injected faults (weak cells, sulfation,
deep discharge, over-watering, weak blocks) are all found (recall 1.0) with precision at least 0.9. Eight
seeds, each a fleet of 48 healthy batteries and 20 faults, so one lucky fleet does not carry the claim.
The same readings judged by a plain highest-minus-lowest spread limit show why the spread rule measures
each cell from the median of the others: healthy large trays cross it by chance.
"""
import pytest
from django.utils import timezone

from fleetcare.care.detection import detect_for_batteries
from fleetcare.fleet.models import Battery
from fleetcare.readings.models import Inspection
from tests.care import noisy_fleet

SEEDS = (20261203, 1, 2, 3, 4, 5, 6, 7)


@pytest.fixture
def fleets(crew):
    now = timezone.now().replace(microsecond=0)
    return [(seed, noisy_fleet.build(seed, crew, now)) for seed in SEEDS], now


def _detect(made, now):
    return detect_for_batteries(Battery.objects.filter(pk__in=[g.battery.pk for g in made]), now=now)


def test_healthy_batteries_raise_no_cell_or_spread_finding_and_every_fault_is_found(fleets):
    fleets, now = fleets
    found, wrong = 0, []
    for seed, made in fleets:
        result = noisy_fleet.score(made, _detect(made, now))
        assert result.batteries == 68 and result.faults == 20
        assert result.healthy_cell_or_spread == [], seed
        assert result.missed == [], seed
        assert result.recall == 1.0
        assert result.precision >= 0.9, (seed, result.false_positives)
        found += result.true_positives
        wrong += result.false_positives
    assert found / (found + len(wrong)) >= 0.9, wrong


def test_a_highest_minus_lowest_limit_would_flag_healthy_trays(crew):
    # The trade's 0.020 post-charge spread (common practice) read as highest minus lowest on one reading: the
    # range of 24 or 40 healthy cells at SD 0.004, read to ±0.005, crosses it often.
    now = timezone.now().replace(microsecond=0)
    made = noisy_fleet.build(SEEDS[0], crew, now)
    healthy = [g.battery.pk for g in made if g.fault == "healthy"]
    latest = {}
    for battery_id, spread in (Inspection.objects.current().post_charge()
                               .filter(battery_id__in=healthy, scope="all", sg_spread__isnull=False)
                               .order_by("battery_id", "-taken_at").values_list("battery_id", "sg_spread")):
        latest.setdefault(battery_id, spread)
    trays = len(latest)
    over = sum(1 for spread in latest.values() if float(spread) > 0.020)
    assert trays == 36
    assert over / trays > 0.2

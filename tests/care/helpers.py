"""Helpers for findings tests: readings stored through the real services, detection run at a fixed moment."""
from decimal import Decimal

from fleetcare.care.detection import detect_for_batteries
from fleetcare.fleet.models import Battery
from fleetcare.readings.services import CellEntry, record_inspection, record_top_up

FULL = "1.285"  # a healthy just-charged cell for the 1.290 profile in tests/conftest.py


def sgs(n=24, low=None, value=FULL):
    """n cells at `value`, with {position: sg} overrides."""
    cells = {p: Decimal(value) for p in range(1, n + 1)}
    for position, sg in (low or {}).items():
        cells[position] = Decimal(sg)
    return cells


def inspect(battery, user, when, situation="charged", cells=None, levels=None, volts=None, scope="all",
            hours_since_charge=None):
    """Store an inspection at 25 °C (the profile's reference, so corrected SG equals the reading)."""
    entries = []
    if volts is not None:
        entries = [CellEntry(position=p, volts=Decimal(v)) for p, v in volts.items()]
    else:
        levels = levels or {}
        entries = [CellEntry(position=p, sg=sg, level=levels.get(p, "ok")) for p, sg in (cells or sgs()).items()]
    inspection, _ = record_inspection(
        battery=battery, user=user, taken_at=when, situation=situation, cells=entries, scope=scope,
        temp_c=Decimal("25.0"), hours_since_charge=hours_since_charge,
    )
    return inspection


def water(battery, user, when, ml, before_charge=False):
    top_up, _ = record_top_up(battery=battery, user=user, done_at=when, volume_ml=Decimal(str(ml)),
                              before_charge=before_charge)
    return top_up


def detect(battery, now):
    return detect_for_batteries(Battery.objects.filter(pk=battery.pk), now=now)


def kinds(findings):
    return sorted(f.kind for f in findings)


def one(findings, kind):
    matches = [f for f in findings if f.kind == kind]
    assert len(matches) == 1, f"expected one {kind}, got {kinds(findings)}"
    return matches[0]

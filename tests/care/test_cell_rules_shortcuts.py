"""The cell rules stop early when the lowest cell is not behind (fleetcare.care.rules: `_none_can_be_weak`
for weak cells, `_may_lag` for the spread): on random trays, at random settings, they give what judging every
cell one by one gives."""
import datetime as dt
import random
from decimal import Decimal
from types import SimpleNamespace

import pytest

from fleetcare.care import rules
from fleetcare.care.policy import THRESHOLDS

DEFAULTS = {t.name: t.default for t in THRESHOLDS}


def tray(rng, n, at):
    full = rng.uniform(1.250, 1.300)
    values = {p: Decimal(str(round(full + rng.gauss(0, 0.004), 3))) for p in range(1, n + 1)}
    for p in rng.sample(range(1, n + 1), rng.choice([0, 0, 1, 2])):  # a cell or two behind, near the lines
        values[p] -= Decimal(rng.choice([5, 15, 20, 25, 26, 30, 35, 50, 55, 60])) / 1000
    if rng.random() < 0.1:
        values = dict.fromkeys(values, values[1])  # a level tray
    cells = tuple(rules.Cell(p, sg, None, "ok") for p, sg in sorted(values.items()))
    return rules.Reading(pk=at, battery_id=1, taken_at=dt.datetime(2026, 5, 1, tzinfo=dt.UTC) - dt.timedelta(days=at),
                         situation=rng.choice(["charged", "equalized"]), scope="all", hours_since_charge=None,
                         sg_mean=None, sg_min=None, sg_max=None, sg_spread=None, lowest_position=None, soc_percent=None,
                         volts_total=None, cells=cells)


@pytest.mark.parametrize("seed", range(4))
def test_the_shortcuts_change_no_answer(seed, monkeypatch):
    rng = random.Random(seed)
    checked = flagged = 0
    for _ in range(1500):
        policy = SimpleNamespace(**DEFAULTS)
        policy.sg_resolution = Decimal(rng.choice(["0.005", "0.001", "0"]))
        policy.spread_readings_in_a_row = rng.choice([1, 2, 3])
        policy.cell_gap_rule_max_cells = rng.choice([0, 6, 12])
        n = rng.choice([2, 3, 6, 12, 18, 24, 40])
        readings = [tray(rng, n, at) for at in range(3)]
        fast = (rules.weak_cells(readings[0], policy, n), rules.spread_is_high(readings, policy))
        with monkeypatch.context() as every_cell:
            every_cell.setattr(rules, "_none_can_be_weak", lambda judged, values: False)
            every_cell.setattr(rules, "_may_lag", lambda *args: True)
            slow = (rules.weak_cells(readings[0], policy, n), rules.spread_is_high(readings, policy))
        assert fast == slow
        checked += 1
        flagged += bool(slow[0][0]) + bool(slow[1][0])
    assert 0 < flagged < checked  # both answers occur

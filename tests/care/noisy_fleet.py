"""A seeded generator of noisy fleets: healthy batteries read with an ordinary float hydrometer, and
batteries with one injected fault each. Readings go through the real services, findings through the
real detection, so the figures are the ones a site would see.

Noise (field notes, "Measuring well"): the cells of a healthy tray differ from each other with a standard
deviation of 0.004 after charge (a few points, fixed for the tray), and every reading is off by up to
±0.005 (uniform), stored to 0.001 as typed. Block voltmeters read to ±0.01 V.
"""
import datetime as dt
import random
from dataclasses import dataclass, field
from decimal import Decimal

from fleetcare.fleet.models import Battery, BatteryProfile, Site
from fleetcare.readings.services import CellEntry, record_inspection, record_top_up

HEALTHY_CELL_SD = 0.004
READING_ERROR = 0.005
VOLTMETER_ERROR = 0.01
DAY = dt.timedelta(days=1)

# Each injected fault and the finding kinds that are right to raise for it (the first is the one that must).
EXPECTED = {
    "healthy": (),
    "weak_cell": ("weak_cell", "high_spread"),
    "sulfation": ("sulfation",),
    "deep_discharge": ("deep_discharge",),
    "over_watering": ("high_water_use",),
    "weak_block": ("weak_block",),
}
CELL_OR_SPREAD = ("weak_cell", "high_spread")
# Not in build(): a cell lagging 15-30 points, around the spread rule's lines, for tests that need batteries
# on both sides of them (tray(cells, "lagging_cell")).
LAGGING_CELL = "lagging_cell"


@dataclass
class Generated:
    battery: Battery
    fault: str
    cells: int
    notes: dict = field(default_factory=dict)


def _sg(rng, true_sg):
    return Decimal(str(round(true_sg + rng.uniform(-READING_ERROR, READING_ERROR), 3)))


def _volts(rng, true_v):
    return Decimal(str(round(true_v + rng.uniform(-VOLTMETER_ERROR, VOLTMETER_ERROR), 2)))


class FleetGenerator:
    def __init__(self, seed, user, now):
        self.rng = random.Random(seed)
        self.user = user
        self.now = now
        self.site = Site.objects.create(name=f"Noisy site {seed}", code=f"noisy{seed}", timezone="UTC")
        self.trays = {
            n: BatteryProfile.objects.create(
                name=f"{2 * n} V {n}-cell tray {seed}", technology="flooded", application="traction",
                nominal_voltage=2 * n, monoblocks=1, cells_per_block=n, capacity_ah=Decimal("620"),
                full_charge_sg=Decimal("1.290"), discharged_sg=Decimal("1.140"),
            )
            for n in (12, 24, 40)
        }
        self.pair = BatteryProfile.objects.create(
            name=f"24 V AGM pair {seed}", technology="agm", application="mobility", nominal_voltage=24, monoblocks=2,
            cells_per_block=6, capacity_ah=Decimal("73"), watering_allowed=False, equalizing_allowed=False,
        )
        self.made = []

    def _battery(self, profile):
        serial = f"N{self.site.code}-{len(self.made) + 1:03d}"
        return Battery.objects.create(serial=serial, profile=profile, site=self.site,
                                      in_service_date=(self.now - 400 * DAY).date())

    def _inspect(self, battery, when, situation, cells, scope="all", hours_since_charge=None):
        record_inspection(battery=battery, user=self.user, taken_at=when, situation=situation, cells=cells, scope=scope,
                          temp_c=Decimal("25.0"), hours_since_charge=hours_since_charge)

    def tray(self, cells, fault="healthy"):
        rng = self.rng
        battery = self._battery(self.trays[cells])
        full = 1.290 - rng.uniform(0.0, 0.006)  # a charged tray reads a few points under its nameplate
        if fault == "sulfation":
            full -= rng.uniform(0.045, 0.065)
        offsets = [rng.gauss(0.0, HEALTHY_CELL_SD) for _ in range(cells)]
        notes = {}
        if fault == "weak_cell":
            position = rng.randrange(cells)
            offsets[position] -= rng.uniform(0.045, 0.070)
            notes["position"] = position + 1
        elif fault == LAGGING_CELL:
            position = rng.randrange(cells)
            offsets[position] -= rng.uniform(0.015, 0.030)
            notes["position"] = position + 1
        for days_ago in (15, 8, 1):
            taken = self.now - days_ago * DAY
            # before the charge: a normal working discharge, pilot cell only, 30-60 % state of charge
            before_soc = rng.uniform(0.30, 0.60)
            pilot_sg = 1.140 + 0.150 * before_soc
            self._inspect(battery, taken - dt.timedelta(hours=9), "before_charge",
                          [CellEntry(position=1, sg=_sg(rng, pilot_sg))], scope="pilot")
            self._inspect(battery, taken, "charged",
                          [CellEntry(position=p + 1, sg=_sg(rng, full + offsets[p]), level="ok") for p in range(cells)])
        if fault == "deep_discharge":
            soc = rng.uniform(0.05, 0.17)
            notes["soc"] = round(100 * soc, 1)
            self._inspect(battery, self.now - 3 * DAY, rng.choice(["in_use", "before_charge"]),
                          [CellEntry(position=1, sg=_sg(rng, 1.140 + 0.150 * soc))], scope="pilot")
        # water after charging: a healthy tray uses about 150-400 mL per cell a month, far under the band
        # (about 740 mL per cell a month for 12 % overcharge of 620 Ah once a day, by Faraday's law);
        # an over-watered (overcharged) one 1,300-1,800 mL
        per_cell_month = rng.uniform(1300, 1800) if fault == "over_watering" else rng.uniform(150, 400)
        for days_ago in (20, 13, 6):
            volume = per_cell_month * cells * 7 / 30
            record_top_up(battery=battery, user=self.user, done_at=self.now - days_ago * DAY + dt.timedelta(hours=1),
                          volume_ml=Decimal(str(round(volume, 1))))
        self.made.append(Generated(battery, fault, cells, notes))

    def chair_pair(self, fault="healthy"):
        rng = self.rng
        battery = self._battery(self.pair)
        rest = rng.uniform(12.70, 12.85)
        low = rng.uniform(0.18, 0.35) if fault == "weak_block" else rng.uniform(0.0, 0.03)
        weak = rng.randrange(2)
        for days_ago in (9, 2):
            volts = [rest, rest]
            volts[weak] -= low
            self._inspect(battery, self.now - days_ago * DAY, "rested",
                          [CellEntry(position=p + 1, volts=_volts(rng, v)) for p, v in enumerate(volts)],
                          hours_since_charge=Decimal("12"))
        self.made.append(Generated(battery, fault, 2, {"position": weak + 1} if fault == "weak_block" else {}))


def build(seed, user, now, healthy_per_size=12, faults_per_kind=4):
    """A fleet: healthy 12-, 24- and 40-cell trays and chair pairs, and `faults_per_kind` of each fault."""
    gen = FleetGenerator(seed, user, now)
    for cells in (12, 24, 40):
        for _ in range(healthy_per_size):
            gen.tray(cells)
    for _ in range(healthy_per_size):
        gen.chair_pair()
    for index in range(faults_per_kind):
        cells = (12, 24, 40)[index % 3]
        for fault in ("weak_cell", "sulfation", "deep_discharge", "over_watering"):
            gen.tray(cells, fault)
        gen.chair_pair("weak_block")
    return gen.made


@dataclass
class Score:
    true_positives: int
    false_positives: list
    missed: list
    healthy_cell_or_spread: list
    batteries: int
    faults: int

    @property
    def precision(self):
        found = self.true_positives + len(self.false_positives)
        return self.true_positives / found if found else 1.0

    @property
    def recall(self):
        return (self.faults - len(self.missed)) / self.faults if self.faults else 1.0


def score(made, findings):
    """Precision over every finding raised; recall over the injected faults (the first expected kind)."""
    by_battery = {}
    for finding in findings:
        by_battery.setdefault(finding.battery_id, []).append(finding.kind)
    tp, fp, missed, healthy_hits = 0, [], [], []
    for g in made:
        kinds = by_battery.get(g.battery.pk, [])
        expected = EXPECTED[g.fault]
        for kind in kinds:
            if kind in expected:
                tp += 1
            else:
                fp.append((g.battery.serial, g.fault, g.cells, kind))
                if g.fault == "healthy" and kind in CELL_OR_SPREAD:
                    healthy_hits.append((g.battery.serial, g.cells, kind))
        if expected and expected[0] not in kinds:
            missed.append((g.battery.serial, g.fault, g.cells, g.notes))
    faults = sum(1 for g in made if g.fault != "healthy")
    return Score(tp, fp, missed, healthy_hits, len(made), faults)

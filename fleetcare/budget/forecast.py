"""When each battery will need replacing and what it will cost: plain data in, plain data out.

No Django and no database here. `fleetcare.budget.selectors` builds `ServiceHistory` from the database
in a fixed number of queries; `forecast_battery` weighs the evidence for one battery; `build_budget`
rolls the resulting lines into calendar quarters and fiscal years over a horizon.

How the date is decided
-----------------------
Each kind of evidence may give a date with an earliest / likely / latest range:

* age: in-service date + the profile's design life;
* cycles: the day the estimated equivalent cycles reach the profile's design cycles. Design cycles
  are quoted at 80 % depth of discharge (field notes), so a charge counts as depth / 80 % of a
  cycle, the depth coming from the state of charge logged before charging, else the profile's
  typical depth from the budget settings, else 80 % (every charge a full design cycle). This
  straight Ah-throughput rule is cautious: shallow cycles usually last longer than it says;
* capacity: a test under the floor (80 %, IEEE Std 450 practice, from memory) is due now;
  otherwise a straight line through the tests, extrapolated to the floor;
* average SG after charge: never a replacement date on its own. Below the full-charge SG less the
  findings' sulfation allowance it calls for "equalize and test" (the suspected-sulfation finding's
  next step); replacement then follows only from a capacity test under the floor or a cell still
  failing after equalizing. A falling trend says when it will reach that level;
* spread after charge: a rising trend is extrapolated to the spread limit;
* failing cells: the cells the weak-cell finding calls failing (still low after equalizing, or low on
  consecutive post-charge readings) are due now. A cell low once after an ordinary charge is not.

The likely date is the earliest likely date of any evidence; that evidence "decides". A measured
capacity trend outranks age and cycles, which are only expectations. The range runs from the
earliest "earliest" to the earliest "latest" of the evidence that counted. A date already past is
budgeted in the current quarter and marked overdue.

A traction tray whose only near problem is one or two failing cells gets a cell line (those cells
now) instead of a whole-battery line now; its whole-battery replacement then comes from the rest of
the evidence. After a whole-battery replacement the new battery's own design life (or cycles, if
sooner) gives its renewal, so a five-year budget carries short-lived wheelchair pairs more than once.

Fiscal years are labelled by the calendar year they end in: with an April start, 1 April 2026 to
31 March 2027 is FY2027. A January start makes the fiscal year the calendar year.
"""
import bisect
import math
import operator
from dataclasses import dataclass, field
from datetime import date, timedelta
from decimal import ROUND_HALF_UP, Decimal
from typing import NamedTuple

from fleetcare import words
from fleetcare.care import cycles, wording
from fleetcare.fleet.life import DAYS_PER_YEAR, design_life_days

CENT = Decimal("0.01")
MIN_RENEWAL = timedelta(days=30)
AGE, CYCLES, CAPACITY, SG_MEAN, SPREAD, CELLS = "age", "cycles", "capacity", "sg_mean", "spread", "cells"
EVIDENCE_LABELS = {
    AGE: "Age against design life",
    CYCLES: "Charge cycles against design cycles",
    CAPACITY: "Capacity tests",
    SG_MEAN: "Average SG after charge",
    SPREAD: "Cell spread after charge",
    CELLS: "Failing cells",
}
LIFE_EXPECTANCY = (AGE, CYCLES)
EQUALIZE_AND_TEST = "Equalize and test: " + wording.EQUALIZE_AND_TEST[0].lower() + wording.EQUALIZE_AND_TEST[1:]
BATTERY, CELL_LINE, RENEWAL = "battery", "cells", "renewal"
LINE_LABELS = {BATTERY: "Replace battery", CELL_LINE: "Replace cells", RENEWAL: "Replace the replacement"}


@dataclass(frozen=True)
class Rules:
    """Forecast thresholds for one battery. Declared, with defaults and sources, in fleetcare.budget.policy
    (capacity floor and SG allowance: the findings' thresholds in fleetcare.care.policy)."""

    capacity_floor_percent: float = 80.0
    sg_drop_allowed: float = 0.030
    spread_limit: float = 0.050
    max_cells_for_cell_option: int = 2
    life_margin_percent: float = 15.0
    trend_window_days: int = 365
    act_within_days: int = 90
    cell_option_clear_days: int = 365
    min_trend_points: int = 4
    design_depth_percent: float = 80.0


@dataclass(frozen=True)
class Money:
    """Prices and the calendar they are budgeted in."""

    installation: Decimal = Decimal("0")
    scrap_credit_per_kg: Decimal = Decimal("0")
    escalation_percent: Decimal = Decimal("0")
    cell_cost: Decimal = Decimal("0")
    fiscal_year_start_month: int = 1
    include_renewals: bool = True


class PostCharge(NamedTuple):
    """One all-cell reading taken after a charge or an equalizing charge (a tuple: a budget of 10,000 batteries
    reads half a million of them)."""

    taken_on: date
    sg_mean: float | None
    sg_spread: float | None
    lowest_position: int | None = None
    sg_min: float | None = None


# The budget reads half a million post-charge points at 10,000 batteries: the selector hands them over as plain
# tuples in PostCharge's field order, so the forecast reads them by position.
POINT_DAY, POINT_MEAN, POINT_SPREAD = 0, 1, 2


@dataclass(frozen=True)
class ServiceHistory:
    """One battery's service so far, as the forecast reads it: age, charges, capacity tests, post-charge
    readings and the cells the findings call failing."""

    battery_id: int
    serial: str
    site_code: str
    profile_id: int
    profile_name: str
    in_service_date: date
    design_life_years: float
    design_cycles: int
    charges_per_day: float
    unit_price: Decimal
    weight_kg: Decimal
    cell_count: int
    traction_tray: bool = True
    full_charge_sg: float | None = None
    site_name: str = ""
    logged_charges: int = 0
    first_logged_charge: date | None = None
    capacity_tests: tuple = ()  # ((date, percent), ...): corrected capacity tests only
    post_charge: tuple = ()  # (PostCharge or a plain tuple in its field order, ...) oldest first
    weak_cells: tuple = ()  # cells the weak-cell finding calls failing
    failing_because: str = ""  # the finding's words for why (still low after equalizing, ...)
    weak_block: bool = False  # a sealed pair with a weak block (finding)
    measured_depth_percent: float | None = None  # mean depth of discharge logged before charging
    typical_depth_percent: float | None = None  # the profile's typical depth, from the budget settings
    installation: Decimal | None = None  # the profile's own installation cost, if it has one


@dataclass(frozen=True)
class Evidence:
    kind: str
    detail: str
    likely: date | None = None
    earliest: date | None = None
    latest: date | None = None
    action: str = ""  # what to do first, where the evidence calls for action rather than a replacement date

    @property
    def label(self):
        return EVIDENCE_LABELS[self.kind]

    @property
    def dated(self):
        return self.likely is not None


@dataclass(frozen=True)
class Line:
    """One budgeted event: a battery (or some of its cells) replaced on `budget_date`."""

    facts: ServiceHistory
    kind: str
    decided_by: Evidence
    likely: date
    earliest: date
    latest: date
    budget_date: date
    overdue_since: date | None
    quarter: str
    quarter_start: date
    fiscal_year: str
    unit_price: Decimal
    escalated_price: Decimal
    installation: Decimal
    scrap_credit: Decimal
    amount: Decimal
    cells: tuple = ()
    whole_battery_amount: Decimal | None = None

    @property
    def label(self):
        if self.kind == CELL_LINE:
            return f"Replace cell{'s' if len(self.cells) > 1 else ''} " + ", ".join(map(str, self.cells))
        return LINE_LABELS[self.kind]


@dataclass(frozen=True)
class Forecast:
    facts: ServiceHistory
    evidence: tuple
    decided_by: Evidence
    likely: date
    earliest: date
    latest: date
    overdue: bool
    cell_option: tuple = ()  # failing cell positions when the cells may be replaced instead
    set_aside: tuple = ()  # evidence kinds left out of the decision, e.g. age when capacity is measured


# --- calendar -----------------------------------------------------------------------------------

def quarter_of(day):
    q = (day.month - 1) // 3 + 1
    return f"{day.year} Q{q}", date(day.year, 3 * q - 2, 1)


def fiscal_year_of(day, start_month=1):
    """Labelled by the calendar year the fiscal year ends in (April start: Apr 2026–Mar 2027 is FY2027)."""
    if start_month == 1:
        return f"FY{day.year}"
    return f"FY{day.year + 1 if day.month >= start_month else day.year}"


def add_years(day, years):
    return day + timedelta(days=design_life_days(years))  # the design-life rule's own day count


def horizon_end(today, years):
    """The first day after the horizon: the same day `years` calendar years on (28 Feb for 29 Feb)."""
    try:
        return today.replace(year=today.year + years)
    except ValueError:
        return today.replace(year=today.year + years, day=28)


def quarter_starts(today, end):
    """Start of every calendar quarter from today's to the one holding the day before `end`."""
    _, start = quarter_of(today)
    last = end - timedelta(days=1)
    out = []
    while start <= last:
        out.append(start)
        month = start.month + 3
        start = date(start.year + (month - 1) // 12, (month - 1) % 12 + 1, 1)
    return out


# --- trends -------------------------------------------------------------------------------------

@dataclass(frozen=True)
class Trend:
    slope: float  # per day
    intercept: float  # value at x = 0 (the origin date)
    slope_se: float | None  # standard error of the slope; None with two points
    origin: date

    def value_on(self, day):
        return self.intercept + self.slope * (day - self.origin).days


def fit_trend(points):
    """Least-squares straight line through [(date, value)]; None with fewer than two distinct dates."""
    if len(points) < 2:
        return None
    origin = points[0][0]
    xs = [(d - origin).days for d, _ in points]
    ys = [float(v) for _, v in points]
    n = len(xs)
    mx, my = sum(xs) / n, sum(ys) / n
    dx = [x - mx for x in xs]
    sxx = sum(map(operator.mul, dx, dx))
    if sxx == 0:
        return None
    slope = sum(map(operator.mul, dx, [y - my for y in ys])) / sxx
    intercept = my - slope * mx
    se = None
    if n > 2:
        misses = [y - (intercept + slope * x) for x, y in zip(xs, ys, strict=True)]
        se = math.sqrt(sum(map(operator.mul, misses, misses)) / (n - 2) / sxx)
    return Trend(slope, intercept, se, origin)


def _reach(origin, start_x, start_value, slope, level):
    if slope == 0 or (level - start_value) / slope < 0:
        return None
    return origin + timedelta(days=math.ceil(start_x + (level - start_value) / slope - 1e-6))


def _trend_range(trend, last_day, level, today, rules, significant_only):
    """earliest / likely / latest days a trend reaches `level` (moving toward it), or None."""
    direction = 1 if level > trend.value_on(last_day) else -1
    if trend.slope * direction <= 0:
        return None
    if significant_only and (trend.slope_se is None or abs(trend.slope) <= 2 * trend.slope_se):
        return None
    start_x = (last_day - trend.origin).days
    start_value = trend.value_on(last_day)
    likely = _reach(trend.origin, start_x, start_value, trend.slope, level)
    if likely is None:
        return None
    spread = trend.slope_se if trend.slope_se is not None else abs(trend.slope) * 0.25
    steeper = _reach(trend.origin, start_x, start_value, trend.slope + direction * spread, level)
    shallow_slope = trend.slope - direction * spread
    shallower = None
    if shallow_slope * direction > 0:
        shallower = _reach(trend.origin, start_x, start_value, shallow_slope, level)
    to_go = max((likely - today).days, 0)
    margin = timedelta(days=math.ceil(to_go * 0.10))
    earliest = min(steeper or likely, likely - margin)
    latest = max(shallower or likely + timedelta(days=to_go), likely + margin)
    return earliest, likely, latest


# --- evidence -----------------------------------------------------------------------------------

def _life_range(likely, life_days, rules):
    margin = timedelta(days=round(life_days * rules.life_margin_percent / 100))
    return likely - margin, likely, likely + margin


def age_evidence(facts, today, rules):
    life_days = facts.design_life_years * DAYS_PER_YEAR
    likely = add_years(facts.in_service_date, facts.design_life_years)
    earliest, likely, latest = _life_range(likely, life_days, rules)
    years = (today - facts.in_service_date).days / DAYS_PER_YEAR
    detail = f"{years:.1f} of {facts.design_life_years:g} years of design life"
    return Evidence(AGE, detail, likely, earliest, latest)


def charge_count(facts, today):
    """Charges so far: the same estimate the ageing finding states (fleetcare.care.cycles)."""
    return cycles.charges_so_far(facts.in_service_date, today, facts.charges_per_day, facts.logged_charges,
                                 facts.first_logged_charge)


def cycle_weight(facts, rules):
    """Design cycles per charge, and where the depth came from."""
    if facts.measured_depth_percent is not None:
        depth, basis = facts.measured_depth_percent, "before-charge readings"
    elif facts.typical_depth_percent is not None:
        depth, basis = facts.typical_depth_percent, "the profile's typical depth"
    else:
        depth, basis = rules.design_depth_percent, "assumed"
    return max(depth, 1.0) / rules.design_depth_percent, f"{depth:.0f} % depth ({basis})"


def cycles_evidence(facts, today, rules):
    count = charge_count(facts, today)
    weight, depth = cycle_weight(facts, rules)
    done, per_day = count.charges * weight, count.per_day * weight
    detail = (f"about {count.whole:,} charges so far ({count.per_day:.2f} a day, from {count.basis}); at {depth} "
              f"that is about {done:,.0f} of {facts.design_cycles:,} design cycles")
    if per_day <= 0 or facts.design_cycles <= 0:
        return Evidence(CYCLES, detail)
    likely = today + timedelta(days=math.ceil((facts.design_cycles - done) / per_day))
    earliest, likely, latest = _life_range(likely, facts.design_cycles / per_day, rules)
    return Evidence(CYCLES, detail, likely=likely, earliest=earliest, latest=latest)


def capacity_evidence(facts, today, rules):
    tests = sorted(facts.capacity_tests)
    if not tests:
        return None
    floor = rules.capacity_floor_percent
    last_day, last_value = tests[-1]
    last_value = float(last_value)
    if last_value < floor:
        detail = f"{last_value:g} % of rating (corrected) on {words.day(last_day)}, under the {floor:g} % floor"
        return Evidence(CAPACITY, detail, last_day, last_day, last_day + timedelta(days=rules.act_within_days))
    trend = fit_trend(tests)
    if trend is None or trend.slope >= 0:
        detail = f"{last_value:g} % of rating (corrected) on {words.day(last_day)}; " + (
            "one test, no trend yet" if len(tests) == 1 else "not falling"
        )
        return Evidence(CAPACITY, detail)
    dates = _trend_range(trend, last_day, floor, today, rules, significant_only=False)
    per_year = -trend.slope * DAYS_PER_YEAR
    detail = (f"{len(tests)} corrected tests, latest {last_value:g} % on {words.day(last_day)}, "
              f"falling {per_year:.1f} points a year toward {floor:g} %")
    if dates is None:
        return Evidence(CAPACITY, detail)
    return Evidence(CAPACITY, detail, dates[1], dates[0], dates[2])


def _recent(facts, today, rules):
    since = today - timedelta(days=rules.trend_window_days)
    return facts.post_charge[bisect.bisect_left(facts.post_charge, since, key=operator.itemgetter(POINT_DAY)):]


def sg_mean_evidence(facts, today, rules):
    """Average SG after charge: "equalize and test" when it is low, never a replacement date on its own."""
    if facts.full_charge_sg is None:
        return None
    points = [(p[POINT_DAY], p[POINT_MEAN]) for p in _recent(facts, today, rules) if p[POINT_MEAN] is not None]
    if not points:
        return None
    level = facts.full_charge_sg - rules.sg_drop_allowed
    recent = [v for _, v in points[-3:]]
    now = sum(recent) / len(recent)
    if len(points) >= 3 and now <= level:
        detail = (f"averaging {now:.3f} after charge, at or under {level:.3f} "
                  f"(full charge {facts.full_charge_sg:.3f} less {rules.sg_drop_allowed:.3f}): "
                  f"{wording.SULFATION.lower()}, not yet a replacement")
        return Evidence(SG_MEAN, detail, action=EQUALIZE_AND_TEST)
    detail = f"averaging {now:.3f} after charge against a limit of {level:.3f}"
    if len(points) < rules.min_trend_points:
        return Evidence(SG_MEAN, detail + "; too few readings for a trend")
    dates = _trend_range(fit_trend(points), points[-1][0], level, today, rules, significant_only=True)
    if dates is None:
        return Evidence(SG_MEAN, detail + "; no clear fall")
    return Evidence(SG_MEAN, detail + f"; falling, at the limit about {words.day(dates[1])}: equalize and test then, "
                                      "not a replacement by itself")


def spread_evidence(facts, today, rules):
    points = [(p[POINT_DAY], p[POINT_SPREAD]) for p in _recent(facts, today, rules) if p[POINT_SPREAD] is not None]
    if not points:
        return None
    limit = rules.spread_limit
    recent = [v for _, v in points[-3:]]
    now = sum(recent) / len(recent)
    if len(points) >= 3 and now >= limit:
        detail = f"spread averaging {now:.3f} after charge, at or over {limit:.3f}"
        day = points[-1][0]
        return Evidence(SPREAD, detail, day, day, day + timedelta(days=rules.act_within_days))
    detail = f"spread averaging {now:.3f} after charge against a limit of {limit:.3f}"
    if len(points) < rules.min_trend_points:
        return Evidence(SPREAD, detail + "; too few readings for a trend")
    dates = _trend_range(fit_trend(points), points[-1][0], limit, today, rules, significant_only=True)
    if dates is None:
        return Evidence(SPREAD, detail + "; no clear rise")
    return Evidence(SPREAD, detail + "; rising", dates[1], dates[0], dates[2])


def failing_cells(facts, rules):
    """The cells the findings call failing (the budget never judges a cell by itself)."""
    return tuple(sorted(set(facts.weak_cells)))


def cells_evidence(facts, today, rules):
    cells = failing_cells(facts, rules)
    if facts.weak_block:
        detail = "a weak block in the pair: blocks are replaced as a matched pair"
        return Evidence(CELLS, detail, today, today, today + timedelta(days=rules.act_within_days)), ()
    if not cells:
        return None, ()
    names = ", ".join(map(str, cells))
    because = facts.failing_because or wording.FAILING_AFTER_EQUALIZING
    detail = f"cell{'s' if len(cells) > 1 else ''} {names} {because} ({wording.WEAK_CELL.lower()} finding)"
    return Evidence(CELLS, detail, today, today, today + timedelta(days=rules.act_within_days)), cells


# --- the forecast -------------------------------------------------------------------------------

def forecast_battery(facts, today, rules=Rules()):
    age = age_evidence(facts, today, rules)
    cycles = cycles_evidence(facts, today, rules)
    capacity = capacity_evidence(facts, today, rules)
    sg = sg_mean_evidence(facts, today, rules)
    cell_ev, cells = cells_evidence(facts, today, rules)
    spread = None if cell_ev is not None else spread_evidence(facts, today, rules)
    evidence = tuple(e for e in (age, cycles, capacity, sg, spread, cell_ev) if e is not None)

    set_aside = ()
    if capacity is not None and capacity.dated and len(facts.capacity_tests) >= 2:
        set_aside = LIFE_EXPECTANCY  # a measured capacity trend outranks expectations
    counted = [e for e in evidence if e.dated and e.kind not in set_aside]

    cell_option = ()
    if (cell_ev is not None and cells and facts.traction_tray and len(cells) <= rules.max_cells_for_cell_option):
        others = [e for e in counted if e.kind != CELLS]
        clear_until = today + timedelta(days=rules.cell_option_clear_days)
        if others and all(e.likely > clear_until for e in others):
            cell_option = cells
            counted = others

    if not counted:  # cannot happen while age always has a date; kept so a bad profile cannot crash the page
        counted = [Evidence(AGE, "no usable evidence", today, today, today)]
    decided = min(counted, key=lambda e: (e.likely, e.kind))
    likely = decided.likely
    earliest = min(e.earliest for e in counted)
    latest = max(min(e.latest for e in counted), likely)
    return Forecast(
        facts=facts, evidence=evidence, decided_by=decided, likely=likely, earliest=min(earliest, likely),
        latest=latest, overdue=likely < today, cell_option=cell_option, set_aside=set_aside,
    )


# --- money --------------------------------------------------------------------------------------

def _cents(value):
    return Decimal(value).quantize(CENT, rounding=ROUND_HALF_UP)


def escalated(price, today, on, escalation_percent):
    """Price grown by the yearly escalation, compounded over the (fractional) years until `on`."""
    years = max((on - today).days, 0) / DAYS_PER_YEAR
    factor = (1 + float(escalation_percent) / 100) ** years
    return _cents(Decimal(str(price)) * Decimal(repr(factor)))


def _installation(facts, money):
    return _cents(facts.installation if facts.installation is not None else money.installation)


def _line(facts, kind, decided_by, likely, earliest, latest, today, money, cells=()):
    budget_date = max(likely, today)
    quarter, quarter_start = quarter_of(budget_date)
    if kind == CELL_LINE:
        share = Decimal(len(cells)) / Decimal(facts.cell_count)
        unit = _cents(money.cell_cost * len(cells))
        scrap = _cents(facts.weight_kg * share * money.scrap_credit_per_kg)
        installation = Decimal("0.00")
    else:
        unit = _cents(facts.unit_price)
        scrap = _cents(facts.weight_kg * money.scrap_credit_per_kg)
        installation = _installation(facts, money)
    price = escalated(unit, today, budget_date, money.escalation_percent)
    whole = None
    if kind == CELL_LINE:
        whole = (escalated(facts.unit_price, today, budget_date, money.escalation_percent)
                 + _installation(facts, money) - _cents(facts.weight_kg * money.scrap_credit_per_kg))
    return Line(
        facts=facts, kind=kind, decided_by=decided_by, likely=budget_date, earliest=max(earliest, today),
        latest=max(latest, budget_date), budget_date=budget_date, overdue_since=likely if likely < today else None,
        quarter=quarter, quarter_start=quarter_start,
        fiscal_year=fiscal_year_of(budget_date, money.fiscal_year_start_month),
        unit_price=unit, escalated_price=price, installation=installation, scrap_credit=scrap,
        amount=price + installation - scrap, cells=tuple(cells), whole_battery_amount=whole,
    )


def renewal_after(facts, replaced_on, rules):
    """The replacement's own end of life: its design life, or its design cycles if sooner."""
    life = add_years(replaced_on, facts.design_life_years)
    rate = charge_count(facts, replaced_on).per_day * cycle_weight(facts, rules)[0]
    by_cycles = None
    if rate > 0 and facts.design_cycles > 0:
        by_cycles = replaced_on + timedelta(days=math.ceil(facts.design_cycles / rate))
    if by_cycles is not None and by_cycles < life:
        kind, likely, life_days = CYCLES, by_cycles, facts.design_cycles / rate
        detail = f"the replacement's {facts.design_cycles:,} design cycles at {rate:.2f} design cycles a day"
    else:
        kind, likely, life_days = AGE, life, facts.design_life_years * DAYS_PER_YEAR
        detail = f"the replacement's {facts.design_life_years:g}-year design life"
    earliest, likely, latest = _life_range(likely, life_days, rules)
    return Evidence(kind, detail, likely, earliest, latest)


def budget_lines(forecast, today, end, money, rules=Rules()):
    """Every event for one battery before `end`: cells now (if that option applies), the battery, renewals."""
    facts = forecast.facts
    lines = []
    if forecast.cell_option:
        cell_ev = next(e for e in forecast.evidence if e.kind == CELLS)
        lines.append(_line(facts, CELL_LINE, cell_ev, cell_ev.likely, cell_ev.earliest, cell_ev.latest, today, money,
                           cells=forecast.cell_option))
    line = _line(facts, BATTERY, forecast.decided_by, forecast.likely, forecast.earliest, forecast.latest, today, money)
    while line.budget_date < end:
        lines.append(line)
        if not money.include_renewals:
            break
        ev = renewal_after(facts, line.budget_date, rules)
        if ev.likely - line.budget_date < MIN_RENEWAL:
            break  # a profile with no design life to speak of: budget it once, not every day
        line = _line(facts, RENEWAL, ev, ev.likely, ev.earliest, ev.latest, today, money)
    return [ln for ln in lines if ln.budget_date < end]


# --- the budget ---------------------------------------------------------------------------------

@dataclass
class Bucket:
    label: str
    start: date | None = None
    fiscal_year: str = ""
    count: int = 0
    amount: Decimal = Decimal("0.00")
    lines: list = field(default_factory=list)

    def add(self, line):
        self.count += 1
        self.amount += line.amount
        self.lines.append(line)


@dataclass
class Budget:
    today: date
    end: date
    years: int
    money: Money
    forecasts: list
    lines: list
    quarters: list  # Bucket per (calendar quarter, fiscal year), in date order, empty ones included
    quarter_totals: list  # Bucket per calendar quarter (the chart)
    fiscal_years: list
    total: Decimal
    count: int
    rules: dict = field(default_factory=dict)  # battery_id -> Rules it was judged by

    def rules_in_force(self, name):
        """The distinct values of one rule across the budget's batteries, smallest first (the default if none)."""
        values = {getattr(r, name) for r in self.rules.values()} or {getattr(Rules(), name)}
        return sorted(values)

    def quarter(self, label):
        return next((q for q in self.quarter_totals if q.label == label), None)


def build_budget(facts_list, today, years=5, money=Money(), rules=Rules()):
    """`rules`: one Rules for every battery, or {battery_id: Rules} (each battery's layered settings)."""
    end = horizon_end(today, years)

    def rules_for(facts):
        return rules.get(facts.battery_id, Rules()) if isinstance(rules, dict) else rules

    forecasts = [forecast_battery(f, today, rules_for(f)) for f in facts_list]
    lines = []
    for fc in forecasts:
        lines.extend(budget_lines(fc, today, end, money, rules_for(fc.facts)))
    lines.sort(key=lambda ln: (ln.budget_date, ln.facts.serial, ln.kind))

    totals = {start: Bucket(quarter_of(start)[0], start) for start in quarter_starts(today, end)}
    pairs = {}
    this_month = today.replace(day=1)
    for start in totals:
        for month in range(3):
            first = date(start.year, start.month + month, 1)
            if first >= end:
                break
            if first < this_month:
                continue
            fy = fiscal_year_of(first, money.fiscal_year_start_month)
            pairs.setdefault((start, fy), Bucket(totals[start].label, start, fy))
    fiscal = {}
    for _, fy in pairs:
        fiscal.setdefault(fy, Bucket(fy, fiscal_year=fy))
    for ln in lines:
        totals[ln.quarter_start].add(ln)
        pairs[(ln.quarter_start, ln.fiscal_year)].add(ln)
        fiscal[ln.fiscal_year].add(ln)
    total = sum((ln.amount for ln in lines), Decimal("0.00"))
    return Budget(
        today=today, end=end, years=years, money=money, forecasts=forecasts, lines=lines,
        quarters=list(pairs.values()), quarter_totals=list(totals.values()), fiscal_years=list(fiscal.values()),
        total=total, count=len(lines), rules={f.battery_id: rules_for(f) for f in facts_list},
    )


"""How many charges a battery has had: the one estimate the ageing finding and the replacement forecast state.

Plain Python, no Django. Crews seldom read after every charge, so logged post-charge readings count only
when they come more often than the site's charges per day; otherwise the site's figure counts. Before the
first logged charge the logged rate is assumed (common practice: a battery works the same shifts from new).
"""
from dataclasses import dataclass
from datetime import date

LOGGED = "logged charges"
SITE_RATE = "the site's charges per day"
SHORTEST_LOGGED_SPAN_DAYS = 7  # FleetCare default: a few days of readings do not make a rate


@dataclass(frozen=True)
class ChargeCount:
    """Charges so far, the charges per day they were counted at, and where that rate came from."""

    charges: float
    per_day: float
    basis: str
    logged: int

    @property
    def whole(self) -> int:
        return round(self.charges)


def charges_so_far(in_service_date: date, today: date, site_charges_per_day: float, logged_charges: int,
                   first_logged_charge: date | None) -> ChargeCount:
    """Charges since `in_service_date` as of `today`: the logged ones plus the logged rate before them when
    the logged rate beats the site's charges per day, else the site's rate times the days in service."""
    site_rate = float(site_charges_per_day)
    days = max((today - in_service_date).days, 0)
    if logged_charges and first_logged_charge is not None:
        span = max((today - first_logged_charge).days, SHORTEST_LOGGED_SPAN_DAYS)
        logged_rate = logged_charges / span
        if logged_rate > site_rate:
            before_logs = max((first_logged_charge - in_service_date).days, 0)
            return ChargeCount(logged_charges + logged_rate * before_logs, logged_rate, LOGGED, logged_charges)
    return ChargeCount(site_rate * days, site_rate, SITE_RATE, logged_charges)

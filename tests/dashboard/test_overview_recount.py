"""The overview's water and findings charts against a plain recount: the water boxes month by month, battery by
battery, and the findings per week counted in the database, each on a seeded random fleet full of ties and of times
that fall exactly on a week's edge."""

import datetime as dt
import random
from collections import defaultdict
from decimal import Decimal

import pytest
from django.db.models import Count, Q
from django.utils import timezone

from fleetcare import charts
from fleetcare.care.models import Finding
from fleetcare.dashboard import selectors
from fleetcare.fleet import site_units
from fleetcare.fleet.access import visible_batteries, visible_sites
from fleetcare.fleet.models import Battery, Site

NOW = dt.datetime(2026, 3, 18, 9, 30, tzinfo=dt.timezone.utc)


def water_boxes_recounted(members, totals_by_month, edges, unit_site):
    """The water boxes worked out the plain way: each month, each battery in turn, each value converted on its own."""
    months = range(len(edges) - 1)
    in_use = (Battery.Status.IN_SERVICE, Battery.Status.CHARGING)
    shown = site_units.cell_water_shown_at(unit_site) if unit_site else None
    groups, outliers = [], []
    for i in months:
        day = edges[i].date()
        values, per_site = [], defaultdict(list)
        for r in members:
            total = totals_by_month.get(r["pk"], {}).get(day)
            if total is None and not (r["status"] in in_use and r["in_service_date"] <= day):
                continue
            ml = float(total or 0) / r["cells"]
            value = float(shown(ml)) if unit_site else round(ml, 1)
            values.append(value)
            per_site[r["site_id"]].append((value, r["serial"]))
        groups.append((edges[i].strftime("%b %Y"), values))
        flagged = []
        for peers in per_site.values():
            site_values = [v for v, _serial in peers]
            middle = sorted(site_values)[len(site_values) // 2]
            flagged.extend((abs(peers[j][0] - middle), peers[j]) for j in selectors._outliers(site_values))
        flagged.sort(key=lambda f: -f[0])
        for rank, (_distance, (value, serial)) in enumerate(flagged):
            outliers.append((edges[i].strftime("%b %Y"), value, serial if rank < selectors.OUTLIER_LABELS_PER_MONTH else ""))
    return groups, outliers


def random_water(seed):
    """Members as the overview's battery rows carry them, and their monthly totals both ways (by month, and as the
    overview reads them: a list in the months' order)."""
    rng = random.Random(seed)
    edges = selectors._month_starts(NOW, selectors.WATER_MONTHS)
    days = [edge.date() for edge in edges[:-1]]
    statuses = [Battery.Status.IN_SERVICE, Battery.Status.CHARGING, Battery.Status.SPARE, Battery.Status.REPAIR]
    members, by_month, by_list = [], {}, {}
    for pk in range(1, rng.randint(8, 120)):
        members.append({
            "pk": pk,
            "serial": f"R-{pk:03d}",
            "site_id": rng.choice([1, 2, 3]),
            "status": rng.choice(statuses),
            "in_service_date": rng.choice([dt.date(2020, 1, 1), rng.choice(days), rng.choice(days) + dt.timedelta(3)]),
            "cells": rng.choice([12, 24, 36]),
        })
        totals = {}
        for day in days:
            if rng.random() < 0.8:
                # A few amounts only, so that many batteries tie and lie equally far from their site's middle.
                totals[day] = Decimal(rng.choice([0, 600, 1200, 2400, 2400, 2400, 2880, 7200, 9000])) + Decimal(
                    rng.choice(["0", "0", "0.5"]))
        by_month[pk] = totals
        if totals:
            by_list[pk] = [totals.get(day) for day in days]
    return members, by_month, by_list, edges


@pytest.mark.parametrize("unit", [None, "L", "floz"])
@pytest.mark.parametrize("seed", range(12))
def test_the_water_boxes_are_those_of_a_month_by_month_recount(seed, unit):
    members, by_month, by_list, edges = random_water(seed)
    unit_site = Site(name="Units", code="u", volume_unit=unit) if unit else None
    groups, outliers = selectors._water_boxes(members, by_list, edges, unit_site)
    want_groups, want_outliers = water_boxes_recounted(members, by_month, edges, unit_site)
    assert outliers == want_outliers  # the same batteries named, in the same order
    assert [(month, sorted(values)) for month, values in groups] == [
        (month, sorted(values)) for month, values in want_groups
    ]
    # The chart sends box statistics only, which do not depend on the order of the values.
    assert charts.box_with_outliers([("P", groups, outliers)], "t", "y") == charts.box_with_outliers(
        [("P", want_groups, want_outliers)], "t", "y"
    )


def test_a_seeded_fleet_names_batteries_that_tie_on_their_distance():
    # The recount above only proves something where equally distant batteries are named; make sure some are.
    ties = 0
    for seed in range(12):
        members, by_month, by_list, edges = random_water(seed)
        _groups, outliers = water_boxes_recounted(members, by_month, edges, None)
        ties += len(outliers) - len({(month, value) for month, value, _serial in outliers})
    assert ties > 0


def findings_per_week_recounted(batteries, edges):
    """The weekly counts as the database counts them."""
    opened = {f"o{i}": Count("pk", filter=Q(opened_at__gte=edges[i], opened_at__lt=edges[i + 1]))
              for i in range(len(edges) - 1)}
    cleared = {f"c{i}": Count("pk", filter=Q(cleared_at__gte=edges[i], cleared_at__lt=edges[i + 1]))
               for i in range(len(edges) - 1)}
    totals = Finding.objects.filter(battery__in=batteries).aggregate(**opened, **cleared)
    n = len(edges) - 1
    return [totals[f"o{i}"] for i in range(n)], [totals[f"c{i}"] for i in range(n)]


@pytest.mark.parametrize("seed", range(3))
def test_the_findings_per_week_are_those_the_database_counts(
    seed, site, other_site, care_site, traction_profile, supervisor
):
    rng = random.Random(seed)
    batteries = [
        Battery.objects.create(serial=f"F-{k:02d}", profile=traction_profile, site=where, status=status,
                               in_service_date=dt.date(2024, 1, 1))
        for k, (where, status) in enumerate(
            [(site, Battery.Status.IN_SERVICE)] * 5 + [(care_site, Battery.Status.SPARE)] * 2
            + [(site, Battery.Status.RETIRED), (other_site, Battery.Status.IN_SERVICE)]
        )
    ]
    with timezone.override(rng.choice(["UTC", "Europe/London", "America/Chicago", "Asia/Kolkata"])):
        edges = selectors._week_starts(NOW, selectors.FINDINGS_WEEKS)
        # On an edge, a microsecond either side, before the first week, inside a week, and never cleared.
        moments = [*edges[:-1], edges[0] - dt.timedelta(microseconds=1), edges[0] - dt.timedelta(weeks=5)]
        moments += [edge + dt.timedelta(microseconds=rng.choice([-1, 1])) for edge in edges[1:-1]]
        moments += [edges[0] + dt.timedelta(seconds=rng.randrange(26 * 7 * 86400)) for _ in range(40)]
        still_open = set()  # one open finding per battery and kind
        for _ in range(120):
            battery, kind = rng.choice(batteries), rng.choice(Finding.Kind.values)
            opened_at = rng.choice(moments)
            cleared_at = rng.choice([None, rng.choice(moments)])
            if cleared_at is None and (battery, kind) in still_open:
                cleared_at = rng.choice(moments)
            if cleared_at is None:
                still_open.add((battery, kind))
            elif cleared_at < opened_at:
                opened_at, cleared_at = cleared_at, opened_at
            Finding.objects.create(
                battery=battery, kind=kind,
                state="cleared" if cleared_at else "open",
                opened_at=opened_at, last_seen_at=cleared_at or opened_at, cleared_at=cleared_at,
            )
        sites = list(visible_sites(supervisor))
        for scope in [None, site, care_site]:
            shown = visible_batteries(supervisor).active()
            if scope is not None:
                shown = shown.filter(site=scope)
            chart = selectors.overview(visible_batteries(supervisor), sites, scope, now=NOW)["findings_chart"]
            opened, cleared = findings_per_week_recounted(shown, edges)
            assert [trace["y"] for trace in chart["data"]] == [opened, cleared]
            assert chart["data"][0]["x"] == [edge.date().isoformat() for edge in edges[:-1]]

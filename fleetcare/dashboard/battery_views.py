from urllib.parse import urlencode

from django.core.paginator import Paginator
from django.shortcuts import render
from django.utils import timezone

from fleetcare.accounts.access import role_required
from fleetcare.accounts.roles import CREW
from fleetcare.dashboard import battery_selectors as selectors
from fleetcare.fleet.access import battery_or_404, visible_batteries, visible_sites
from fleetcare.fleet.models import Battery, BatteryProfile
from fleetcare.fleet.site_time import site_clock
from fleetcare.replica import reads_from_replica

COLUMNS = (
    ("Serial", "serial"),
    ("Site", "site"),
    ("Profile", "profile"),
    ("Status", "status"),
    ("Fitted to", "fitted"),
    ("Latest reading", "latest"),
    ("State of charge", "soc"),
    ("Spread, highest − lowest (points)", "spread"),
)


@role_required(CREW)
@reads_from_replica
def battery_list(request):
    filters = selectors.BatteryFilters.from_query(request.GET)
    sites = list(visible_sites(request.user))
    batteries = selectors.battery_list(visible_batteries(request.user), filters, timezone.now(), sites)
    page = Paginator(batteries, selectors.LIST_PAGE_SIZE).get_page(request.GET.get("page"))
    return render(
        request,
        "dashboard/battery_list.html",
        {
            "page": page,
            "filters": filters,
            "columns": _sort_links(filters),
            "page_query": urlencode(filters.as_params()),
            "sites": sites,
            "statuses": Battery.Status.choices,
            "profiles": BatteryProfile.objects.filter(batteries__site__in=sites).distinct(),
            "soc_bands": list(selectors.SOC_BAND_LABELS.items()),
            "finding_kinds": selectors.finding_kinds(),
            "overdue_kinds": list(selectors.OVERDUE_KINDS.items()),
        },
    )


def _sort_links(filters):
    """Each column heading links to the list sorted by it; a second click reverses the order."""
    links = []
    for label, key in COLUMNS:
        current = filters.sort == key
        sort = f"-{key}" if current and not filters.descending else key
        links.append(
            {
                "label": label,
                "url": "?" + urlencode(filters.as_params(sort=sort)),
                "order": ("descending" if filters.descending else "ascending") if current else "",
            }
        )
    return links


@role_required(CREW)
def battery_detail(request, pk):
    battery = battery_or_404(request.user, pk)
    with site_clock(battery):
        record = selectors.battery_record(battery, page=request.GET.get("page"),
                                          months=selectors.chart_months(request.GET.get("months")))
        return render(request, "dashboard/battery_detail.html", record)

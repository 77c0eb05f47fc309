from django.core.paginator import Paginator
from django.db.models import Q
from django.shortcuts import render

from fleetcare.accounts.access import battery_or_404, role_required, visible_batteries, visible_sites
from fleetcare.accounts.roles import CREW
from fleetcare.fleet import selectors
from fleetcare.fleet.models import Battery


@role_required(CREW)
def battery_list(request):
    batteries = visible_batteries(request.user).select_related("profile", "site")
    query = request.GET.get("q", "").strip()
    site = request.GET.get("site", "")
    status = request.GET.get("status", "")
    if query:
        batteries = batteries.filter(
            Q(serial__icontains=query)
            | Q(fittings__vehicle__asset_number__icontains=query, fittings__removed_at__isnull=True)
        ).distinct()
    if site:
        batteries = batteries.filter(site__code=site)
    if status:
        batteries = batteries.filter(status=status)
    batteries = selectors.with_latest_reading(batteries)
    page = Paginator(batteries, 50).get_page(request.GET.get("page"))
    return render(request, "fleet/battery_list.html", {
        "page": page, "query": query, "site": site, "status": status,
        "sites": visible_sites(request.user), "statuses": Battery.Status.choices,
    })


@role_required(CREW)
def battery_detail(request, pk):
    battery = battery_or_404(request.user, pk)
    return render(request, "fleet/battery_detail.html", selectors.battery_record(battery))

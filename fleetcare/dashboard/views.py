from django.shortcuts import render

from fleetcare.accounts.access import role_required, visible_batteries, visible_sites
from fleetcare.accounts.roles import CREW
from fleetcare.fleet import selectors


@role_required(CREW)
def home(request):
    batteries = list(selectors.with_latest_reading(visible_batteries(request.user).active().select_related("profile", "site")))
    return render(request, "dashboard/home.html", {
        "batteries": batteries,
        "sites": visible_sites(request.user),
        "soc_chart": selectors.fleet_soc_chart(batteries) if batteries else None,
    })

from django.shortcuts import render

from fleetcare.accounts.access import role_required, site_or_404, visible_batteries, visible_sites
from fleetcare.accounts.roles import CREW
from fleetcare.dashboard import selectors


@role_required(CREW)
def home(request):
    scope = site_or_404(request.user, request.GET["site"]) if request.GET.get("site") else None
    sites = list(visible_sites(request.user))
    return render(request, "dashboard/home.html", selectors.overview(visible_batteries(request.user), sites, scope))

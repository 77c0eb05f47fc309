"""The label sheet a supervisor prints, the tablet's scan screen, and the address a label's code holds."""
from django.contrib import messages
from django.http import HttpResponse
from django.shortcuts import redirect, render
from django.urls import reverse

from fleetcare.accounts.access import role_required
from fleetcare.fleet.access import site_or_404, visible_sites
from fleetcare.accounts.roles import CREW, SUPERVISOR
from fleetcare.fleet.models import Battery
from fleetcare.labels import selectors
from fleetcare.labels.sheets import LAYOUTS


@role_required(SUPERVISOR)
def print_labels(request):
    """Choose a site, the batteries and the sheet; the PDF comes from sheet()."""
    sites = list(visible_sites(request.user))
    site = site_or_404(request.user, request.GET["site"]) if request.GET.get("site") else (sites[0] if sites else None)
    batteries = list(Battery.objects.filter(site=site).active().select_related("profile").order_by("serial")) if site else []
    return render(request, "labels/print.html", {
        "sites": sites, "site": site, "layouts": LAYOUTS.values(),
        "rows": [(b, selectors.profile_line(b.profile)) for b in batteries],
    })


@role_required(SUPERVISOR)
def sheet(request, site):
    site = site_or_404(request.user, site)
    layout = request.GET.get("layout", "a4")
    try:
        if layout not in LAYOUTS:
            raise selectors.LabelError(f"There is no “{layout}” sheet: choose one of those listed.")
        pdf = selectors.sheet_pdf(site, request.GET.getlist("battery"), layout, selectors.base_url(request))
    except selectors.LabelError as exc:
        messages.error(request, str(exc))
        return redirect(reverse("labels:print") + f"?site={site.code}")
    response = HttpResponse(pdf, content_type="application/pdf")
    response["Content-Disposition"] = f'inline; filename="labels-{site.code}-{layout}.pdf"'
    return response


@role_required(CREW)
def scan(request):
    """The tablet's camera reads a label and opens that battery's entry screen (scan.js does the reading)."""
    return render(request, "labels/scan.html", {
        "scan_data": selectors.scan_data(request.user, selectors.base_url(request)),
    })


@role_required(CREW)
def battery(request, site, serial):
    """The address in a label's code: the battery's entry screen, or why not (another site, retired)."""
    outcome = selectors.resolve_label(request.user, site, serial)
    if outcome.kind == selectors.OPEN:
        return redirect(outcome.url)
    status = 410 if outcome.kind == selectors.RETIRED else 404
    return render(request, "labels/not_opened.html", {"outcome": outcome}, status=status)

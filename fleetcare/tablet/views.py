"""The tablet's offline pieces: the service worker, the page shown without a connection, and the outbox."""
from django.contrib.staticfiles import finders
from django.http import Http404, HttpResponse
from django.shortcuts import render

from fleetcare.accounts.access import public_view, role_required
from fleetcare.accounts.roles import CREW


@public_view
def offline(request):
    """Shown by the service worker when a page is not kept on the tablet and there is no connection."""
    return render(request, "tablet/offline.html")


@role_required(CREW)
def outbox(request):
    """Readings kept on this tablet and not yet stored: the list itself lives in the browser (IndexedDB)."""
    return render(request, "tablet/outbox.html")


@public_view
def service_worker(request):
    """The service worker, served from the site root so its scope covers every entry screen."""
    found = finders.find("sw.js")
    if not found:
        raise Http404("sw.js is missing from the static files")
    with open(found, encoding="utf-8") as handle:
        response = HttpResponse(handle.read(), content_type="application/javascript; charset=utf-8")
    response["Service-Worker-Allowed"] = "/"
    response["Cache-Control"] = "no-cache"
    return response

from django.contrib import messages
from django.core.exceptions import ValidationError
from django.core.paginator import Paginator
from django.shortcuts import get_object_or_404, redirect, render
from django.urls import reverse
from django.utils.http import url_has_allowed_host_and_scheme
from django.views.decorators.http import require_http_methods, require_POST

from fleetcare.accounts.access import role_required
from fleetcare.accounts.roles import CREW, SUPERVISOR
from fleetcare.care import selectors, services, tasks
from fleetcare.care.forms import AcknowledgeForm, FindingFilterForm
from fleetcare.care.models import Finding
from fleetcare.fleet.access import visible_batteries, visible_sites

PAGE_SIZE = 100


def _back(request, default):
    target = request.POST.get("next") or request.GET.get("next")
    if target and url_has_allowed_host_and_scheme(target, allowed_hosts={request.get_host()}):
        return target
    return default


@role_required(CREW)
def finding_list(request):
    sites = list(visible_sites(request.user))
    form = FindingFilterForm(request.GET or None, sites=sites)
    filters = form.cleaned_data if form.is_valid() else {}
    site = next((s for s in sites if s.code == filters.get("site")), None)
    findings = selectors.findings_list(
        request.user, site=site, kind=filters.get("kind", ""), serial=filters.get("battery", ""),
        state=filters.get("state") or "active",
    )
    page = Paginator(findings, PAGE_SIZE).get_page(request.GET.get("page"))
    query = request.GET.copy()
    query.pop("page", None)
    return render(request, "care/finding_list.html", {
        "form": form, "page": page, "findings": page.object_list, "query": query.urlencode(), "site": site,
    })


@role_required(CREW)
def finding_detail(request, pk):
    finding = get_object_or_404(
        Finding.objects.visible_to(request.user).select_related("battery", "battery__site", "acknowledged_by", "inspection"),
        pk=pk,
    )
    return render(request, "care/finding_detail.html", {
        "finding": finding, "form": AcknowledgeForm(), "battery": finding.battery,
    })


@role_required(SUPERVISOR)
@require_http_methods(["POST"])
def acknowledge(request, pk):
    finding = get_object_or_404(Finding.objects.visible_to(request.user).select_related("battery"), pk=pk)
    form = AcknowledgeForm(request.POST)
    if form.is_valid():
        try:
            services.acknowledge(finding, request.user, form.cleaned_data["comment"])
        except ValidationError as error:
            messages.error(request, " ".join(error.messages))
        else:
            messages.success(request, f"Acknowledged: {finding.battery.serial}, {finding.get_kind_display().lower()}.")
            return redirect(_back(request, finding_url(finding)))
    else:
        messages.error(request, "Add a comment to acknowledge a finding.")
    return render(request, "care/finding_detail.html", {"finding": finding, "form": form, "battery": finding.battery},
                  status=400)


@role_required(SUPERVISOR)
@require_POST
def check_now(request):
    batteries = visible_batteries(request.user)
    code = request.POST.get("site", "")
    if code:
        batteries = batteries.filter(site__code=code)
    count = batteries.count()
    tasks.check_sites.enqueue(request.user.pk, code)
    messages.success(request, f"Checking {count} batter{'y' if count == 1 else 'ies'} in the background: the "
                              "findings list shows the result in a minute or so (reload the page).")
    return redirect(_back(request, "care:findings"))


def finding_url(finding):
    return reverse("care:finding", args=[finding.pk])

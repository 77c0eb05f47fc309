from contextlib import nullcontext

from django.contrib import messages
from django.http import HttpResponseBadRequest
from django.shortcuts import redirect, render
from django.urls import reverse
from django.views.decorators.http import require_POST

from fleetcare.accounts.access import role_required
from fleetcare.accounts.roles import ADMINISTRATOR, CREW, SUPERVISOR, has_role
from fleetcare.dashboard import selectors, settings_page
from fleetcare.dashboard.landing import landing, sees_overview
from fleetcare.dashboard.forms import ChangeSettingForm
from fleetcare.fleet.access import site_or_404, visible_batteries, visible_sites
from fleetcare.fleet.models import BatteryProfile
from fleetcare.fleet.site_time import site_clock
from fleetcare.replica import reads_from_replica


@role_required(CREW)
def start(request):
    """Where signing in lands: the crew on today's work (the site they last used), everyone else on the overview."""
    return redirect(landing(request.user))


@role_required(CREW)
@reads_from_replica
def home(request):
    if not sees_overview(request.user):  # the crew's front page is today's work, as after signing in
        return redirect(landing(request.user))
    scope = site_or_404(request.user, request.GET["site"]) if request.GET.get("site") else None
    sites = list(visible_sites(request.user))
    with site_clock(scope) if scope else nullcontext():
        return render(request, "dashboard/home.html", selectors.overview(visible_batteries(request.user), sites, scope))


def _profiles(site):
    """Every profile, those in use at the site first."""
    used = set(site.batteries.values_list("profile_id", flat=True))
    return sorted(BatteryProfile.objects.all(), key=lambda p: (p.pk not in used, p.name))


def _chosen_profile(request, profiles):
    wanted = request.GET.get("profile") or request.POST.get("profile") or ""
    return next((p for p in profiles if str(p.pk) == wanted), profiles[0] if profiles else None)


@role_required(SUPERVISOR)
def settings_home(request):
    site = visible_sites(request.user).order_by("code").first()
    if site is None:
        return render(request, "dashboard/settings.html", {"sites": [], "groups": []})
    return redirect("dashboard:settings_site", code=site.code)


@role_required(SUPERVISOR)
def settings_site(request, code, form=None, status=200):
    site = site_or_404(request.user, code)
    profiles = _profiles(site)
    profile = _chosen_profile(request, profiles)
    groups = settings_page.settings_in_force(site, profile) if profile else []
    return render(request, "dashboard/settings.html", {
        "site": site, "sites": visible_sites(request.user).order_by("code"), "profiles": profiles,
        "profile": profile, "groups": groups, "scopes": settings_page.SCOPES, "form": form,
        "can_change": has_role(request.user, ADMINISTRATOR),
    }, status=status)


@role_required(ADMINISTRATOR)
@require_POST
def change_setting(request, code):
    site = site_or_404(request.user, code)
    profiles = _profiles(site)
    profile = _chosen_profile(request, profiles)
    form = ChangeSettingForm(request.POST)
    if profile is None:
        return HttpResponseBadRequest("There is no battery profile yet.")
    if not form.is_valid():
        return settings_site(request, code, form=form, status=400)
    data = form.cleaned_data
    settings_page.change_setting(key=data["key"], scope=data["scope"], site=site, profile=profile,
                                 value=data["value"], note=data["note"])
    messages.success(request, "Setting saved." if data["value"] is not None else "Setting cleared: the level below applies.")
    return redirect(f"{reverse('dashboard:settings_site', args=[site.code])}?profile={profile.pk}")

from django.contrib import messages
from django.http import Http404, HttpResponse
from django.shortcuts import get_object_or_404, redirect, render
from django.urls import reverse
from django.utils import timezone
from django.views.decorators.http import require_http_methods, require_POST

from fleetcare import chemistry
from fleetcare.accounts.access import public_view, role_required
from fleetcare.accounts.roles import CREW, SUPERVISOR, has_role
from fleetcare.fleet import site_time
from fleetcare.fleet.access import battery_or_404, site_or_404, visible_batteries, visible_sites
from fleetcare.fleet.site_time import site_clock
from fleetcare.planner import ical, selectors, services
from fleetcare.planner.forms import EndChargeForm, ReadingForm, SkipForm, StartChargeForm
from fleetcare.planner.models import SiteSettings
from fleetcare.planner.plans import PLAN_DAYS
from fleetcare.readings import validation
from fleetcare.readings.forms import temp_label


def site_temperature(temp_c, site, unit=True):
    """A temperature stored in °C, as the site reads it."""
    value = float(temp_c)
    if site.temp_unit == "F":
        value = chemistry.c_to_f(value)
    return f"{value:.0f} {temp_label(site)}" if unit else f"{value:.1f}".rstrip("0").rstrip(".")


LAST_SITE_COOKIE = "fc_site"  # the site whose work this tablet last opened: the crew land there next time


@role_required(CREW)
def home(request):
    sites = list(visible_sites(request.user).order_by("name"))
    last = request.COOKIES.get(LAST_SITE_COOKIE)
    remembered = next((s for s in sites if s.code == last), None)
    if remembered is not None and "choose" not in request.GET:
        return redirect("planner:today", code=remembered.code)
    if len(sites) == 1:
        return redirect("planner:today", code=sites[0].code)
    return render(request, "planner/home.html", {"sites": sites, "supervisor": has_role(request.user, SUPERVISOR)})


@role_required(CREW)
def today(request, code):
    site = site_or_404(request.user, code)
    day = selectors.site_days([site])[site.pk]
    with site_clock(site):
        response = render(request, "planner/today.html", {
            "site": site, "day": day, "supervisor": has_role(request.user, SUPERVISOR),
            "other_sites": [s for s in visible_sites(request.user).order_by("name") if s.pk != site.pk],
            "takes_water": selectors.site_takes_water(site),
        })
    response.set_cookie(LAST_SITE_COOKIE, site.code, max_age=365 * 24 * 3600, samesite="Lax",
                        secure=request.is_secure(), httponly=True)
    return response


@role_required(CREW)
@require_POST
def skip(request, code):
    site = site_or_404(request.user, code)
    form = SkipForm(request.POST)
    if form.is_valid():
        battery = get_object_or_404(visible_batteries(request.user), pk=form.cleaned_data["battery"], site=site)
        services.skip_task(battery=battery, kind=form.cleaned_data["kind"], day=site_time.today_at(site),
                           reason=form.cleaned_data["reason"], user=request.user)
        messages.info(request, f"Noted: {battery.serial} not done today ({form.cleaned_data['reason']}). It stays on the list.")
    else:
        messages.error(request, "Say why the task cannot be done today, then press Not today again.")
    return redirect("planner:today", code=site.code)


@role_required(SUPERVISOR)
def plan(request, code):
    site = site_or_404(request.user, code)
    try:
        week = max(0, min(int(request.GET.get("week", 0)), PLAN_DAYS // 7 - 1))
    except ValueError:
        week = 0
    view = selectors.week_view(site, week)
    settings = services.site_settings(site)
    feed_url = request.build_absolute_uri(reverse("planner:feed", args=[settings.feed_token]))
    with site_clock(site):
        return render(request, "planner/week.html", {**view, "feed_url": feed_url})


@role_required(SUPERVISOR)
@require_POST
def new_feed_token(request, code):
    site = site_or_404(request.user, code)
    services.regenerate_feed_token(site)
    messages.success(request, "The calendar feed has a new address. The old one no longer works: subscribe again with the new one.")
    return redirect("planner:plan", code=site.code)


def _ics_response(site):
    entry, plan = selectors.site_plan(site)
    serials = {pk: facts.battery.serial for pk, facts in entry.facts.items()}
    text = ical.calendar(site, plan, serials, timezone.now())
    response = HttpResponse(text.encode("utf-8"), content_type="text/calendar; charset=utf-8")
    response["Content-Disposition"] = f'inline; filename="fleetcare-{site.code}-plan.ics"'
    return response


@role_required(SUPERVISOR)
def plan_ics(request, code):
    return _ics_response(site_or_404(request.user, code))


# Calendar programs subscribe to a URL and cannot sign in with a session, so this feed is public:
# the secret token in the address is the credential (per site, regenerable by supervisors to revoke it).
# An unknown token answers 404 and says nothing about which sites exist.
@public_view
def feed(request, token):
    settings = SiteSettings.objects.select_related("site").filter(feed_token=token).first()
    if settings is None or not token:
        raise Http404("No such calendar feed.")
    return _ics_response(settings.site)


def _levelling(battery, charge):
    control = selectors.equalizing_control(battery, charge)
    site = battery.site
    limits = control["limits"]
    control["stop_temp"] = site_temperature(limits["stop_temp_c"], site)
    control["hot_temp"] = site_temperature(limits["hot_temp_c"], site)
    control["unit"] = temp_label(site)
    for row in control["rows"]:
        row.temp_shown = site_temperature(row.reading.temp_c, site, unit=False) if row.reading.temp_c is not None else "–"
    return control


@role_required(CREW)
@require_http_methods(["GET", "POST"])
def equalizing(request, pk):
    battery = battery_or_404(request.user, pk)
    with site_clock(battery):
        record = selectors.equalizing_record(battery)
        running = record["running"]
        form = StartChargeForm()
        if request.method == "POST" and running is None:
            form = StartChargeForm(request.POST, battery=battery)
            if form.is_valid():
                try:
                    services.start_charge(battery=battery, user=request.user, **form.cleaned_data)
                except services.NotAllowed as exc:
                    messages.error(request, str(exc))
                return redirect("planner:equalizing", pk=battery.pk)
        elif request.method == "POST":
            return redirect("planner:equalizing", pk=battery.pk)
        return render(request, "planner/equalizing.html", {
            "battery": battery, "profile": battery.profile, "site": battery.site, "record": record,
            "running": running, "start_form": form, "reading_form": ReadingForm(site=battery.site),
            "end_form": EndChargeForm(), "levelling": _levelling(battery, running),
            "closing_url": reverse("readings:inspect", args=[battery.pk]) + "?scope=all&situation=equalized",
            "limits": validation.limits_for(battery, timezone.now()).as_json(),
            "last_ended": next((c for c in record["past"] if c.ended_at), None),
        })


@role_required(CREW)
@require_POST
def equalizing_reading(request, pk):
    battery = battery_or_404(request.user, pk)
    with site_clock(battery):
        record = selectors.equalizing_record(battery)
        running = record["running"]
        if running is None:
            messages.error(request, "No equalizing charge is running on this battery: start one first.")
            return redirect("planner:equalizing", pk=battery.pk)
        form = ReadingForm(request.POST, site=battery.site, battery=battery)
        if form.is_valid():
            data = form.cleaned_data
            services.add_reading(charge=running, taken_at=data["taken_at"], sg=data["sg"], temp_c=data["temp"],
                                 volts=data["volts"], basis=data["basis"], client_uuid=data["client_uuid"])
            return redirect(reverse("planner:equalizing", args=[battery.pk]) + "#readings")
        return render(request, "planner/equalizing.html", {
            "battery": battery, "profile": battery.profile, "site": battery.site, "record": record,
            "running": running, "start_form": None, "reading_form": form, "end_form": EndChargeForm(),
            "levelling": _levelling(battery, running),
            "closing_url": reverse("readings:inspect", args=[battery.pk]) + "?scope=all&situation=equalized",
            "limits": validation.limits_for(battery, timezone.now()).as_json(),
        }, status=400)


@role_required(CREW)
@require_POST
def equalizing_end(request, pk):
    battery = battery_or_404(request.user, pk)
    with site_clock(battery):
        running = selectors.equalizing_record(battery)["running"]
        if running is None:
            return redirect("planner:equalizing", pk=battery.pk)
        form = EndChargeForm(request.POST, battery=battery)
        if not form.is_valid():
            problems = [m for field in form.errors.values() for m in field]
            messages.error(request, " ".join(problems) or "Enter when the equalizing charge ended.")
            return redirect("planner:equalizing", pk=battery.pk)
        services.end_charge(charge=running, ended_at=form.cleaned_data["ended_at"], notes=form.cleaned_data["notes"])
        messages.success(request, f"Equalizing charge on {battery.serial} ended. Now read all cells: choose "
                                  "“Just equalized” as the situation.")
        return redirect(reverse("readings:inspect", args=[battery.pk]) + "?scope=all&situation=equalized")

from django.contrib import messages
from django.http import Http404, HttpResponse
from django.shortcuts import redirect, render
from django.views.decorators.http import require_http_methods

from fleetcare.accounts.access import role_required
from fleetcare.accounts.roles import MANAGER, SUPERVISOR
from fleetcare.budget import exports, selectors, services
from fleetcare.budget.forecast import Bucket
from fleetcare.budget.forms import AssumptionsForm, CapacityTestForm, ProfileSettingsForm
from fleetcare.budget.models import BudgetAssumptions, CapacityTest
from fleetcare.care import policy as care_policy
from fleetcare.fleet.access import visible_batteries, visible_sites
from fleetcare.fleet.models import BatteryProfile
from fleetcare.replica import reads_from_replica
from fleetcare.spreadsheets import attach

MAX_YEARS = 10


def _filters(request):
    """The batteries the page covers and the filters that chose them (unknown site or profile: 404)."""
    sites = list(visible_sites(request.user))
    batteries = visible_batteries(request.user)
    site_code = request.GET.get("site", "")
    profile_id = request.GET.get("profile", "")
    scope = ["all my sites"]
    if site_code:
        site = next((s for s in sites if s.code == site_code), None)
        if site is None:
            raise Http404("No such site.")
        batteries = batteries.filter(site=site)
        scope = [f"site {site.code}"]
    profiles = list(BatteryProfile.objects.filter(batteries__site__in=sites).distinct())
    if profile_id:
        profile = next((p for p in profiles if str(p.pk) == profile_id), None)
        if profile is None:
            raise Http404("No such battery profile.")
        batteries = batteries.filter(profile=profile)
        scope.append(f"profile {profile.name}")
    try:
        years = min(max(int(request.GET.get("years", 5)), 1), MAX_YEARS)
    except ValueError:
        years = 5
    return batteries, {"site": site_code, "profile": profile_id, "years": years, "sites": sites,
                       "profiles": profiles, "scope": ", ".join(scope)}


@role_required(MANAGER)
@reads_from_replica
def budget_page(request):
    batteries, filters = _filters(request)
    budget, assumptions = selectors.replacement_budget(batteries, years=filters["years"])
    chosen = request.GET.get("quarter", "")
    drill = drill_down(budget, chosen)
    query = request.GET.copy()
    query.pop("quarter", None)
    return render(request, "budget/budget.html", {
        **filters, "budget": budget, "assumptions": assumptions,
        "chart": selectors.budget_chart(budget, assumptions.currency),
        "drill": drill, "drill_rows": selectors.drill_rows(budget, drill), "quarter": chosen,
        "filter_query": query.urlencode(), "overdue": sum(1 for ln in budget.lines if ln.overdue_since),
        "profile_prices": exports.prices_rows(budget), "rule_rows": exports.rule_rows(budget),
        "fiscal_start_name": exports.MONTHS[assumptions.fiscal_year_start_month - 1],
    })


def drill_down(budget, chosen):
    """The quarter asked for ("2027 Q1"), every line ("all"), or None."""
    if chosen == "all":
        return Bucket("All quarters", count=budget.count, amount=budget.total, lines=budget.lines)
    return budget.quarter(chosen) if chosen else None


@role_required(MANAGER)
@reads_from_replica
def export(request, fmt):
    batteries, filters = _filters(request)
    budget, assumptions = selectors.replacement_budget(batteries, years=filters["years"])
    stamp = f"{budget.today:%Y-%m-%d}"
    if fmt == "xlsx":
        response = HttpResponse(
            exports.to_xlsx(budget, assumptions, filters["scope"]),
            content_type="application/vnd.openxmlformats-officedocument.spreadsheetml.sheet",
        )
    else:
        response = HttpResponse(exports.to_csv(budget, assumptions, filters["scope"]),
                                content_type="text/csv; charset=utf-8")
    return attach(response, f"replacement-budget-{stamp}.{fmt}")


@role_required(MANAGER)
@require_http_methods(["GET", "POST"])
def assumptions(request):
    current = BudgetAssumptions.current()
    profiles = BatteryProfile.objects.filter(batteries__site__in=visible_sites(request.user)).distinct()
    if request.method == "POST":
        form = AssumptionsForm(request.POST, instance=current)
        prices = ProfileSettingsForm(request.POST, profiles=profiles)
        if form.is_valid() and prices.is_valid():
            services.save_assumptions(form=form, profile_settings=prices.settings(), user=request.user)
            messages.success(request, "Budget assumptions saved.")
            return redirect("budget:home")
    else:
        form = AssumptionsForm(instance=current)
        prices = ProfileSettingsForm(profiles=profiles)
    return render(request, "budget/assumptions.html", {"form": form, "prices": prices, "assumptions": current})


@role_required(SUPERVISOR)
@require_http_methods(["GET", "POST"])
def capacity_tests(request):
    batteries = visible_batteries(request.user).active().select_related("site").order_by("serial")
    if request.method == "POST":
        form = CapacityTestForm(request.POST, batteries=batteries)
        if form.is_valid():
            data = form.cleaned_data
            test = services.record_capacity_test(
                battery=data["battery"], user=request.user, tested_on=data["tested_on"],
                start_temp_c=data["start_temp_c"], end_volts_per_cell=data["end_volts_per_cell"],
                current_a=data["current_a"], hours_to_end=data["hours_to_end"], delivered_ah=data["delivered_ah"],
                cell_volts=data.get("cell_volts_by_position"), notes=data["notes"],
            )
            messages.success(request, f"Capacity test saved: {test.battery.serial} gave {test.percent_of_rated} % of "
                                      f"rated capacity, corrected to {test.reference_temp_c:.0f} °C ({test.method_label}).")
            return redirect("budget:capacity_tests")
    else:
        form = CapacityTestForm(batteries=batteries, initial={"battery": request.GET.get("battery") or None})
    recent = CapacityTest.objects.filter(battery__in=visible_batteries(request.user)).select_related(
        "battery", "battery__site", "tested_by")[:30]
    return render(request, "budget/capacity_tests.html", {
        "form": form, "recent": recent, "floor": care_policy.defaults().capacity_floor_percent,
    })

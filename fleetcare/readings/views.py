from django.contrib import messages
from django.db.models import Q
from django.http import HttpResponse
from django.shortcuts import get_object_or_404, redirect, render
from django.views.decorators.http import require_http_methods

from fleetcare.accounts.access import battery_or_404, role_required, visible_batteries
from fleetcare.accounts.roles import CREW
from fleetcare.readings import csv_io, selectors
from fleetcare.readings.forms import InspectionForm, TopUpForm
from fleetcare.readings.models import Inspection
from fleetcare.readings.services import record_inspection, record_top_up


@role_required(CREW)
def find_battery(request):
    """Find a battery by serial or by the asset number of the truck or chair it is fitted to."""
    query = request.GET.get("q", "").strip()
    action = request.GET.get("then", "inspect")
    matches = []
    if query:
        matches = list(
            visible_batteries(request.user).active().filter(
                Q(serial__icontains=query)
                | Q(fittings__vehicle__asset_number__icontains=query, fittings__removed_at__isnull=True)
            ).select_related("profile", "site").distinct()[:25]
        )
        if len(matches) == 1:
            target = "readings:top_up" if action == "water" else "readings:inspect"
            return redirect(target, pk=matches[0].pk)
    return render(request, "readings/find.html", {"query": query, "matches": matches, "then": action})


@role_required(CREW)
@require_http_methods(["GET", "POST"])
def inspect(request, pk):
    battery = battery_or_404(request.user, pk)
    scope = request.GET.get("scope", Inspection.Scope.ALL_CELLS)
    if request.method == "POST":
        form = InspectionForm(request.POST, battery=battery)
        if form.is_valid():
            inspection, created = record_inspection(battery=battery, user=request.user, **form.record_kwargs())
            if not created:
                messages.info(request, "This inspection was already saved; nothing was stored twice.")
            return redirect("readings:inspection", pk=inspection.pk)
    else:
        form = InspectionForm(battery=battery, initial={"scope": scope})
    return render(request, "readings/inspect.html", {
        "battery": battery, "profile": battery.profile, "form": form, "scope": scope,
        "tray_columns": selectors.tray_columns(battery.profile.positions),
    })


@role_required(CREW)
def inspection_detail(request, pk):
    inspection = get_object_or_404(
        Inspection.objects.visible_to(request.user).select_related("battery__profile", "battery__site", "taken_by"), pk=pk
    )
    return render(request, "readings/inspection.html", selectors.inspection_page(inspection))


@role_required(CREW)
@require_http_methods(["GET", "POST"])
def top_up(request, pk):
    battery = battery_or_404(request.user, pk)
    if request.method == "POST":
        form = TopUpForm(request.POST, battery=battery)
        if form.is_valid():
            data = form.cleaned_data
            _, created = record_top_up(
                battery=battery, user=request.user, done_at=data["done_at"], volume_ml=data["volume_ml"],
                volume_entered=data["volume_entered"], before_charge=data["before_charge"],
                water_type=data["water_type"], notes=data["notes"], client_uuid=data["client_uuid"],
            )
            messages.success(request, f"Top-up saved for {battery.serial}: {data['volume_entered']}." if created
                             else "This top-up was already saved; nothing was stored twice.")
            return redirect("fleet:battery", pk=battery.pk)
    else:
        form = TopUpForm(battery=battery)
    return render(request, "readings/top_up.html", {"battery": battery, "form": form})


@role_required(CREW)
def export_csv(request, pk):
    battery = battery_or_404(request.user, pk)
    response = HttpResponse(content_type="text/csv; charset=utf-8")
    response["Content-Disposition"] = f'attachment; filename="readings-{battery.serial}.csv"'
    csv_io.write_battery_readings(response, battery)
    return response


@role_required(CREW)
@require_http_methods(["GET", "POST"])
def import_csv(request):
    report = None
    if request.method == "POST" and request.FILES.get("file"):
        upload = request.FILES["file"]
        good_rows_only = bool(request.POST.get("good_rows_only"))
        dry_run = bool(request.POST.get("dry_run"))
        try:
            text = upload.read().decode("utf-8-sig")
        except UnicodeDecodeError:
            messages.error(request, "The file is not UTF-8 text. Save it as CSV (UTF-8) and try again.")
        else:
            report = csv_io.import_readings(
                text, user=request.user, batteries=visible_batteries(request.user),
                good_rows_only=good_rows_only, dry_run=dry_run,
            )
    elif request.method == "POST":
        messages.error(request, "Choose a CSV file to import.")
    return render(request, "readings/import.html", {"report": report, "columns": csv_io.COLUMNS})

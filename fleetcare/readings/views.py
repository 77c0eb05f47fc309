from django.contrib import messages
from django.db.models import Q
from django.conf import settings
from django.core.files.storage import default_storage
from django.http import FileResponse, Http404, HttpResponse, JsonResponse
from django.shortcuts import redirect, render
from django.urls import reverse
from django.views.decorators.http import require_http_methods

from fleetcare import words
from fleetcare.accounts.access import role_required
from fleetcare.accounts.forms import ReasonForm
from fleetcare.accounts.roles import CREW, SUPERVISOR, has_role
from fleetcare.fleet import site_time, site_units
from fleetcare.fleet.access import battery_or_404, visible_batteries
from fleetcare.fleet.site_time import site_clock
from fleetcare.readings import csv_io, selectors, services
from fleetcare.readings.access import csv_import_or_404, inspection_or_404, top_up_or_404
from fleetcare.readings.audit import inspection_versions
from fleetcare.readings.forms import InspectionForm, TopUpForm
from fleetcare.readings.models import CellReading, Inspection
from fleetcare.readings.services import record_inspection, record_top_up
from fleetcare.readings.tasks import queue_csv_import, read_progress
from fleetcare.replica import reads_from_replica
from fleetcare.spreadsheets import attach


@role_required(CREW)
def find_battery(request):
    """Find a battery by serial or by the asset number of the truck or chair it is fitted to."""
    query = request.GET.get("q", "").strip()
    action = request.GET.get("then", "inspect")
    matches = []
    if query:
        batteries = visible_batteries(request.user).active()
        if action == "water":
            batteries = batteries.filter(profile__watering_allowed=True)  # sealed blocks are never watered
        matches = list(
            batteries.filter(
                Q(serial__icontains=query)
                | Q(fittings__vehicle__asset_number__icontains=query, fittings__removed_at__isnull=True)
            ).select_related("profile", "site").distinct()[:25]
        )
        if len(matches) == 1:
            if action == "water":
                return redirect(reverse("readings:top_up", args=[matches[0].pk]) + "?via=search")
            return redirect(reverse("readings:inspect", args=[matches[0].pk]) + "?via=search")
    return render(request, "readings/find.html", {"query": query, "matches": matches, "then": action})


@role_required(CREW)
@require_http_methods(["GET", "POST"])
def inspect(request, pk):
    battery = battery_or_404(request.user, pk)
    scope = request.GET.get("scope", Inspection.Scope.ALL_CELLS)
    if request.method == "POST":
        form = InspectionForm(request.POST, battery=battery)
        if form.is_valid():
            inspection, created = record_inspection(
                battery=battery, user=request.user, chosen_via=Inspection.chosen_on_tablet(request.POST.get("chosen_via")),
                **form.record_kwargs(),
            )
            if not created:
                messages.info(request, "This inspection was already saved; nothing was stored twice.")
            return redirect("readings:inspection", pk=inspection.pk)
    else:
        initial = {"scope": scope}
        if request.GET.get("situation") in Inspection.Situation.values:
            initial["situation"] = request.GET["situation"]
        form = InspectionForm(battery=battery, initial=initial)
    with site_clock(battery):
        return render(request, "readings/inspect.html", {
            "battery": battery, "profile": battery.profile, "form": form, "scope": scope,
            "chosen_via": Inspection.chosen_on_tablet(request.POST.get("chosen_via") or request.GET.get("via")),
            "tray_columns": selectors.tray_columns(battery.profile.positions),
            "by_search": (request.POST.get("chosen_via") or request.GET.get("via")) == "search",
            "fitting": battery.current_fitting(),
        })


@role_required(CREW)
def inspection_detail(request, pk):
    inspection = inspection_or_404(request.user, pk)
    context = selectors.inspection_page(inspection)
    context["versions"] = inspection_versions(inspection)
    context["can_change"] = has_role(request.user, SUPERVISOR) and not services.refusal(inspection)
    with site_clock(inspection):
        return render(request, "readings/inspection.html", context)


def stored_values(inspection):
    """The form's initial values from a stored inspection, in the site's units."""
    temp = site_units.temp_shown(inspection.temp_c, inspection)
    initial = {
        "situation": inspection.situation, "scope": inspection.scope,
        "taken_at": inspection.taken_at.replace(second=0, microsecond=0), "temp": temp,
        "hydrometer_compensated": inspection.hydrometer_compensated,
        "hours_since_charge": inspection.hours_since_charge, "notes": inspection.notes,
    }
    for cell in inspection.cells.all():
        if cell.volts is not None:
            initial[f"volts_{cell.position}"] = cell.volts
        if cell.sg is not None:
            initial[f"sg_{cell.position}"] = cell.sg
            initial[f"low_{cell.position}"] = cell.level == CellReading.Level.LOW
    return initial


@role_required(SUPERVISOR)
@require_http_methods(["GET", "POST"])
def correct_inspection(request, pk):
    """A correction stores a new version of the reading; the old one is kept and shown in its history."""
    old = inspection_or_404(request.user, pk)
    refused = services.refusal(old)
    if refused:
        messages.error(request, refused)
        return redirect("readings:inspection", pk=old.pk)
    battery = old.battery
    scope = request.GET.get("scope", old.scope)
    if request.method == "POST":
        form = InspectionForm(request.POST, battery=battery, correcting=True)
        reason = ReasonForm(request.POST)
        if form.is_valid() and reason.is_valid():
            fields = form.record_kwargs()
            try:
                new, created = services.correct_inspection(
                    old, user=request.user, reason=reason.cleaned_data["reason"], **fields
                )
            except services.RevisionError as exc:
                messages.error(request, str(exc))
                return redirect("readings:inspection", pk=old.pk)
            messages.success(request, "Correction saved as a new version; the earlier version is kept in the history."
                             if created else "This correction was already saved; nothing was stored twice.")
            return redirect("readings:inspection", pk=new.pk)
    else:
        form = InspectionForm(battery=battery, initial={**stored_values(old), "scope": scope}, correcting=True)
        reason = ReasonForm()
    with site_clock(battery):
        return render(request, "readings/correct.html", {
            "battery": battery, "profile": battery.profile, "form": form, "scope": scope, "reason_form": reason,
            "old": old, "tray_columns": selectors.tray_columns(battery.profile.positions),
        })


@role_required(SUPERVISOR)
@require_http_methods(["GET", "POST"])
def remove_inspection(request, pk):
    inspection = inspection_or_404(request.user, pk)
    refused = services.refusal(inspection)
    if refused:
        messages.error(request, refused)
        return redirect("readings:inspection", pk=inspection.pk)
    form = ReasonForm(request.POST or None)
    if request.method == "POST" and form.is_valid():
        try:
            services.remove_inspection(inspection, user=request.user, reason=form.cleaned_data["reason"])
        except services.RevisionError as exc:
            messages.error(request, str(exc))
            return redirect("readings:inspection", pk=inspection.pk)
        messages.success(request, "Reading removed. It is kept in the history and no longer counts.")
        return redirect("fleet:battery", pk=inspection.battery_id)
    return render(request, "readings/remove.html", {
        "form": form, "battery": inspection.battery, "what": "reading",
        "summary": f"{inspection.get_situation_display()} reading taken {_site_moment(inspection.taken_at, inspection)}",
        "back": reverse("readings:inspection", args=[inspection.pk]),
    })


@role_required(SUPERVISOR)
@require_http_methods(["GET", "POST"])
def remove_top_up(request, pk):
    top_up = top_up_or_404(request.user, pk)
    if top_up.deleted_at is not None:
        messages.error(request, "This top-up was already removed.")
        return redirect("fleet:battery", pk=top_up.battery_id)
    form = ReasonForm(request.POST or None)
    if request.method == "POST" and form.is_valid():
        try:
            services.remove_top_up(top_up, user=request.user, reason=form.cleaned_data["reason"])
        except services.RevisionError as exc:
            messages.error(request, str(exc))
        else:
            messages.success(request, "Top-up removed. It is kept in the history and no longer counts.")
        return redirect("fleet:battery", pk=top_up.battery_id)
    return render(request, "readings/remove.html", {
        "form": form, "battery": top_up.battery, "what": "water top-up",
        "summary": f"{top_up.volume_entered or f'{top_up.volume_ml} mL'} on {_site_moment(top_up.done_at, top_up)}",
        "back": reverse("fleet:battery", args=[top_up.battery_id]),
    })


@role_required(CREW)
@require_http_methods(["GET", "POST"])
def top_up(request, pk):
    battery = battery_or_404(request.user, pk)
    if not battery.profile.watering_allowed:
        messages.info(request, f"{battery.serial} has sealed blocks: they are never watered. Read the block voltages instead.")
        return redirect("readings:inspect", pk=battery.pk)
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
    with site_clock(battery):
        return render(request, "readings/top_up.html", {
            "battery": battery, "form": form, "by_search": request.GET.get("via") == "search",
            "fitting": battery.current_fitting(),
        })


@role_required(CREW)
@reads_from_replica
def export_csv(request, pk):
    battery = battery_or_404(request.user, pk)
    response = HttpResponse(content_type="text/csv; charset=utf-8")
    attach(response, f"readings-{battery.serial}.csv")
    csv_io.write_battery_readings(response, battery)
    return response


@role_required(CREW)
@require_http_methods(["GET", "POST"])
def import_csv(request):
    """Upload page: the file is stored and imported by the background worker; the import's page follows it."""
    if request.method == "POST":
        upload = request.FILES.get("file")
        limit_mb = settings.FLEETCARE_IMPORT_MAX_MB
        if upload is None:
            messages.error(request, "Choose a CSV file to import.")
        elif upload.size > limit_mb * 1024 * 1024:
            messages.error(request, f"The file is {upload.size / 1024 / 1024:,.0f} MB; the largest accepted is "
                                    f"{limit_mb} MB. Split it into smaller files and import each.")
        elif not upload.size:
            messages.error(request, "The file is empty.")
        else:
            job = queue_csv_import(
                upload, user=request.user, dry_run=bool(request.POST.get("dry_run")),
                good_rows_only=bool(request.POST.get("good_rows_only")),
            )
            return redirect("readings:import_result", import_id=job.pk)
    return render(request, "readings/import.html", {
        "columns": csv_io.COLUMNS, "optional_columns": csv_io.OPTIONAL_COLUMNS,
        "limit_mb": settings.FLEETCARE_IMPORT_MAX_MB, "recent": selectors.recent_imports(request.user),
    })


@role_required(CREW)
def import_result(request, import_id):
    job = csv_import_or_404(request.user, import_id)
    return render(request, "readings/import_result.html", selectors.import_page(job))


@role_required(CREW)
def import_progress(request, import_id):
    job = csv_import_or_404(request.user, import_id)
    return JsonResponse({"state": job.state, "finished": job.finished, **read_progress(job)})


@role_required(CREW)
def import_notes(request, import_id):
    """Every note of an import (problems, values to check, readings already stored) as CSV."""
    job = csv_import_or_404(request.user, import_id)
    if not job.notes_file.name or not default_storage.exists(job.notes_file.name):
        raise Http404("This import kept no list of notes.")
    response = FileResponse(default_storage.open(job.notes_file.name, "rb"), content_type="text/csv; charset=utf-8",
                            as_attachment=True, filename=f"import-notes-{job.pk}.csv")
    return response


def _site_moment(moment, obj):
    local = site_time.local(moment, obj)
    return f"{words.moment(local)} {local.tzname()}"

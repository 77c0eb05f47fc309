"""Entry forms for the battery room: every bad value gets its message beside the box it came from."""
import uuid
from dataclasses import dataclass
from decimal import Decimal

from django import forms
from django.utils import timezone

from fleetcare import chemistry
from fleetcare.fleet import site_time, site_units
from fleetcare.fleet.models import Battery, Site
from fleetcare.fleet.site_time import SiteDateTimeField
from fleetcare.readings import validation
from fleetcare.readings.models import CellReading, Inspection, WaterTopUp
from fleetcare.readings.services import CellEntry
from fleetcare.readings.validation import SG_HIGH, SG_LOW, TEMP_HIGH_C, TEMP_LOW_C  # noqa: F401 (used by the CSV import)

RETIRED_MESSAGE = "This battery is retired: nothing can be logged against it. Check the serial, or ask a supervisor."


def to_celsius(value, site):
    return site_units.temp_typed_to_c(value, site)


def temp_label(site):
    return site_units.temp_label(site)


def check_temp_c(temp_c, site):
    return validation.temp_problem(temp_c, fahrenheit=site.temp_unit == Site.TempUnit.FAHRENHEIT)


def check_when(form, name, battery):
    """The one date rule (validation.when_problem) on a form's date field, as the field's own error; with the
    form's limits (the settings in force for the battery, as the tablet's check has them) where it has them."""
    when = form.cleaned_data.get(name)
    limits = getattr(form, "limits", None) or validation.limits_for(battery, timezone.now())
    problem = validation.when_problem(when, limits, timezone.now(), label=str(form.fields[name].label))
    if problem:
        raise forms.ValidationError(problem)
    return when


class SGField(forms.CharField):
    """Takes SG as the crew says it: '265' or '1265' or '1.265' all mean 1.265."""

    def to_python(self, value):
        value = super().to_python(value)
        if value in self.empty_values:
            return None
        sg, problem = validation.parse_sg(value)
        if problem:
            raise forms.ValidationError(problem)
        return sg


def _widget_attrs(**extra):
    attrs = {"autocomplete": "off", "class": "form-control form-control-lg"}
    attrs.update(extra)
    return attrs


@dataclass(frozen=True)
class CellRow:
    position: int
    field: forms.BoundField
    low: forms.BoundField | None = None
    confirm: forms.BoundField | None = None
    suspect: bool = False


class InspectionForm(forms.Form):
    """Header fields plus one box per cell (flooded) or per block (sealed), laid out like the tray."""

    situation = forms.ChoiceField(choices=Inspection.Situation.choices, initial=Inspection.Situation.JUST_CHARGED)
    scope = forms.ChoiceField(choices=Inspection.Scope.choices, initial=Inspection.Scope.ALL_CELLS, widget=forms.HiddenInput)
    taken_at = SiteDateTimeField(
        label="Taken at", widget=forms.DateTimeInput(attrs={"type": "datetime-local"}, format="%Y-%m-%dT%H:%M")
    )
    temp = forms.DecimalField(label="Electrolyte temperature", required=False, max_digits=5, decimal_places=1,
                              widget=forms.TextInput(attrs=_widget_attrs(inputmode="decimal")))
    hydrometer_compensated = forms.BooleanField(
        label="My hydrometer corrects for temperature itself", required=False,
        widget=forms.CheckboxInput(attrs={"class": "form-check-input"}),
    )
    hours_since_charge = forms.DecimalField(
        label="Hours since charge or load ended", required=False, min_value=0, max_value=9999, decimal_places=1,
        widget=forms.TextInput(attrs=_widget_attrs(inputmode="decimal")),
    )
    notes = forms.CharField(required=False, widget=forms.Textarea(attrs={"rows": 2, "class": "form-control"}))
    client_uuid = forms.UUIDField(widget=forms.HiddenInput)

    def __init__(self, *args, battery, correcting=False, **kwargs):
        self.battery = battery
        self.correcting = correcting  # a supervisor correcting stored history, which a retired battery keeps
        self.profile = battery.profile
        self.site = battery.site
        initial = kwargs.setdefault("initial", {})
        initial.setdefault("client_uuid", uuid.uuid4())
        initial.setdefault("taken_at", site_time.now_at(battery))
        super().__init__(*args, **kwargs)
        self.fields["taken_at"].zone = battery
        self.fields["taken_at"].help_text = f"{self.site.name} time ({site_time.zone_of(battery).key})"
        self.limits = validation.limits_for(battery, timezone.now())
        self.fields["temp"].label = f"{self.temp_word} ({temp_label(self.site)})"
        self.fields["temp"].widget.attrs["autofocus"] = True
        if not self.profile.is_flooded:
            del self.fields["hydrometer_compensated"]
            self.fields["situation"].initial = Inspection.Situation.RESTED
        for position in range(1, self.profile.positions + 1):
            if self.profile.reads_by_block:
                self.fields[f"volts_{position}"] = forms.DecimalField(
                    label=f"Block {position} V", required=False, max_digits=6, decimal_places=3,
                    widget=forms.TextInput(attrs=_widget_attrs(inputmode="decimal", **{"data-position": position})),
                )
            else:
                self.fields[f"sg_{position}"] = SGField(
                    label=f"Cell {position}", required=False,
                    widget=forms.TextInput(attrs=_widget_attrs(inputmode="numeric", pattern="[0-9.]*", maxlength="6",
                                                                **{"data-position": position, "data-autoadvance": "sg"})),
                )
                self.fields[f"low_{position}"] = forms.BooleanField(
                    label="low", required=False, widget=forms.CheckboxInput(attrs={"class": "form-check-input"})
                )
                self.fields[f"confirm_{position}"] = forms.BooleanField(
                    label="Yes, it reads this", required=False,
                    widget=forms.CheckboxInput(attrs={"class": "form-check-input", "data-confirm": position}),
                )

    def cell_rows(self):
        """One row per box of the tray grid: its value box, and for cells the low and confirmation boxes."""
        suspects = getattr(self, "suspects", {})
        for position in range(1, self.profile.positions + 1):
            if self.profile.reads_by_block:
                yield CellRow(position, self[f"volts_{position}"])
            else:
                yield CellRow(position, self[f"sg_{position}"], self[f"low_{position}"], self[f"confirm_{position}"],
                              suspect=position in suspects)

    def clean_taken_at(self):
        return check_when(self, "taken_at", self.battery)

    def clean_situation(self):
        situation = self.cleaned_data.get("situation")
        message = validation.situation_problem(situation, self.limits.situations)
        if message:
            raise forms.ValidationError(message)
        return situation

    @property
    def situation_choices(self):
        """The situations offered for this battery: a sealed one has no "Just equalized"."""
        return [(v, label) for v, label in self.fields["situation"].choices if v in self.limits.situations]

    def header_fields(self):
        return [self[name] for name in ("situation", "taken_at", "temp", "hydrometer_compensated", "hours_since_charge") if name in self.fields]

    @property
    def temp_word(self):
        """Sealed blocks have no electrolyte to reach: their temperature is the block's."""
        return "Electrolyte temperature" if self.profile.is_flooded else "Block temperature"

    def clean_temp(self):
        temp_c = to_celsius(self.cleaned_data.get("temp"), self.site)
        message = validation.temp_problem(temp_c, self.site.temp_unit == Site.TempUnit.FAHRENHEIT, self.temp_word)
        if message:
            raise forms.ValidationError(message)
        return temp_c

    def clean(self):
        data = super().clean()
        if self.battery.status == Battery.Status.RETIRED and not self.correcting:
            raise forms.ValidationError(RETIRED_MESSAGE)
        scope = data.get("scope") or Inspection.Scope.ALL_CELLS
        if self.profile.reads_by_block:
            self._clean_blocks(data, scope)
        else:
            self._clean_cells(data, scope)
        return data

    def _clean_cells(self, data, scope):
        filled = [p for p in range(1, self.profile.positions + 1) if data.get(f"sg_{p}") is not None]
        if scope == Inspection.Scope.ALL_CELLS:
            for p in range(1, self.profile.positions + 1):
                if f"sg_{p}" in data and data[f"sg_{p}"] is None and f"sg_{p}" not in self.errors:
                    self.add_error(f"sg_{p}", f"Cell {p} is empty: an all-cell reading needs all {self.profile.positions} cells.")
            typed = [p for p in range(1, self.profile.positions + 1) if str(self.data.get(f"sg_{p}", "")).strip()]
            problem = validation.missing_cells_problem(len(typed), self.profile.positions, False, self.battery.serial)
            if problem:
                self.add_error(None, problem)
        elif len(filled) != 1:
            self.add_error(None, "A pilot-cell reading has exactly one cell filled in.")
        if filled and data.get("temp") is None and not data.get("hydrometer_compensated"):
            self.add_error("temp", "Enter the electrolyte temperature, or tick that your hydrometer corrects for it.")
        values = {p: data[f"sg_{p}"] for p in filled}
        problem = validation.tray_problem(values, self.limits, self.battery.serial)
        if problem:
            self.add_error(None, problem)
            return
        self.suspects = validation.suspect_cells(values, self.limits)
        for p, why in self.suspects.items():
            if not data.get(f"confirm_{p}"):
                self.add_error(f"sg_{p}", why)

    def _clean_blocks(self, data, scope):
        for p in range(1, self.profile.positions + 1):
            name = f"volts_{p}"
            value = data.get(name)
            if value is None:
                if name not in self.errors and scope == Inspection.Scope.ALL_CELLS:
                    self.add_error(name, f"Block {p} is empty: read every block.")
                continue
            problem = validation.volts_problem(value, self.profile, self.battery.serial)
            if problem:
                self.add_error(name, problem)
        filled = [p for p in range(1, self.profile.positions + 1) if data.get(f"volts_{p}") is not None]
        if scope != Inspection.Scope.ALL_CELLS and len(filled) != 1:
            self.add_error(None, "A single-block reading has exactly one block filled in.")

    def cell_entries(self):
        data = self.cleaned_data
        entries = []
        for p in range(1, self.profile.positions + 1):
            if self.profile.reads_by_block:
                if data.get(f"volts_{p}") is not None:
                    entries.append(CellEntry(position=p, volts=data[f"volts_{p}"]))
            elif data.get(f"sg_{p}") is not None:
                level = CellReading.Level.LOW if data.get(f"low_{p}") else CellReading.Level.OK
                entries.append(CellEntry(position=p, sg=data[f"sg_{p}"], level=level))
        return entries

    def record_kwargs(self):
        data = self.cleaned_data
        return {
            "taken_at": data["taken_at"],
            "situation": data["situation"],
            "scope": data.get("scope") or Inspection.Scope.ALL_CELLS,
            "temp_c": data.get("temp"),
            "hydrometer_compensated": bool(data.get("hydrometer_compensated")),
            "hours_since_charge": data.get("hours_since_charge"),
            "notes": data.get("notes", ""),
            "client_uuid": data["client_uuid"],
            "cells": self.cell_entries(),
        }


class TopUpForm(forms.Form):
    done_at = SiteDateTimeField(label="Done at", widget=forms.DateTimeInput(attrs={"type": "datetime-local"}, format="%Y-%m-%dT%H:%M"))
    volume = forms.DecimalField(min_value=Decimal("0.001"), max_digits=8, decimal_places=3,
                                widget=forms.TextInput(attrs=_widget_attrs(inputmode="decimal", autofocus=True)))
    per_cell = forms.BooleanField(label="That amount went into each cell (not the whole battery)", required=False)
    before_charge = forms.BooleanField(label="Added before charging (plates were exposed)", required=False)
    water_type = forms.ChoiceField(choices=WaterTopUp.WaterType.choices, initial=WaterTopUp.WaterType.DISTILLED)
    notes = forms.CharField(required=False, widget=forms.Textarea(attrs={"rows": 2}))
    client_uuid = forms.UUIDField(widget=forms.HiddenInput)

    MAX_ML_PER_CELL = Decimal("2000")

    def clean_done_at(self):
        return check_when(self, "done_at", self.battery)

    def __init__(self, *args, battery, **kwargs):
        self.battery = battery
        self.site = battery.site
        initial = kwargs.setdefault("initial", {})
        initial.setdefault("client_uuid", uuid.uuid4())
        initial.setdefault("done_at", site_time.now_at(battery))
        super().__init__(*args, **kwargs)
        self.fields["done_at"].zone = battery
        self.fields["done_at"].help_text = f"{self.site.name} time ({site_time.zone_of(battery).key})"
        self.limits = validation.limits_for(battery, timezone.now())
        unit = "US fl oz" if site_units.uses_us_fl_oz(self.site) else "litres"
        self.fields["volume"].label = f"Water added ({unit})"

    def clean(self):
        data = super().clean()
        if self.battery.status == Battery.Status.RETIRED:
            raise forms.ValidationError(RETIRED_MESSAGE)
        if not self.battery.profile.watering_allowed:
            raise forms.ValidationError("This battery is sealed: it must not be watered.")
        volume = data.get("volume")
        if volume is None:
            return data
        ml = site_units.volume_typed_to_ml(volume, self.site)
        unit = site_units.volume_label(self.site)
        cells = self.battery.profile.cell_count
        whole_ml = ml * cells if data.get("per_cell") else ml
        if whole_ml / cells > self.MAX_ML_PER_CELL:
            self.add_error("volume", f"That is over {self.MAX_ML_PER_CELL / 1000:.0f} L a cell: check the amount and its unit.")
        data["volume_ml"] = whole_ml.quantize(Decimal("0.1"))
        data["volume_entered"] = f"{volume} {unit}{' per cell' if data.get('per_cell') else ''}"
        return data

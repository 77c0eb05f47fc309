import uuid

from django import forms
from django.utils import timezone

from fleetcare.fleet.site_time import SiteDateTimeField

from fleetcare.planner.models import EqualizingReading
from fleetcare.planner.selectors import KINDS
from fleetcare.readings.forms import SGField, check_temp_c, check_when, temp_label, to_celsius

BIG = {"class": "form-control form-control-lg", "autocomplete": "off"}


def _when(label):
    return SiteDateTimeField(label=label, widget=forms.DateTimeInput(
        attrs={"type": "datetime-local", "class": "form-control form-control-lg"}, format="%Y-%m-%dT%H:%M"))


def _now():
    """Now on the clock of the site the view made current (site_time.site_clock)."""
    return timezone.localtime().replace(second=0, microsecond=0)


class DatedForm(forms.Form):
    """A form whose date field follows the one date rule for the battery (not ahead of now, not before service)."""

    date_field = ""

    def __init__(self, *args, battery=None, **kwargs):
        self.battery = battery
        super().__init__(*args, **kwargs)

    def clean(self):
        data = super().clean()
        if self.battery is not None and self.date_field in data:
            try:
                check_when(self, self.date_field, self.battery)
            except forms.ValidationError as exc:
                self.add_error(self.date_field, exc)
        return data


class StartChargeForm(DatedForm):
    date_field = "started_at"
    started_at = _when("Charger switched to equalizing at")
    notes = forms.CharField(required=False, widget=forms.Textarea(attrs={"rows": 2, "class": "form-control"}))
    client_uuid = forms.UUIDField(widget=forms.HiddenInput)

    def __init__(self, *args, **kwargs):
        initial = kwargs.setdefault("initial", {})
        initial.setdefault("client_uuid", uuid.uuid4())
        initial.setdefault("started_at", _now())
        super().__init__(*args, **kwargs)


class ReadingForm(DatedForm):
    date_field = "taken_at"
    taken_at = _when("Taken at")
    basis = forms.ChoiceField(label="Cells read", choices=EqualizingReading.Basis.choices,
                              widget=forms.Select(attrs={"class": "form-select form-select-lg"}),
                              initial=EqualizingReading.Basis.PILOT)
    sg = SGField(label="Specific gravity (265 = 1.265)", widget=forms.TextInput(attrs={**BIG, "inputmode": "decimal"}))
    temp = forms.DecimalField(label="Electrolyte temperature", max_digits=5, decimal_places=1,
                              widget=forms.TextInput(attrs={**BIG, "inputmode": "decimal"}))
    volts = forms.DecimalField(label="Battery volts (optional)", required=False, max_digits=6, decimal_places=2,
                               min_value=0, widget=forms.TextInput(attrs={**BIG, "inputmode": "decimal"}))
    client_uuid = forms.UUIDField(widget=forms.HiddenInput)

    def __init__(self, *args, site, **kwargs):
        self.site = site
        initial = kwargs.setdefault("initial", {})
        initial.setdefault("client_uuid", uuid.uuid4())
        initial.setdefault("taken_at", _now())
        super().__init__(*args, **kwargs)
        self.fields["temp"].label = f"Electrolyte temperature ({temp_label(site)})"

    def clean_temp(self):
        temp_c = to_celsius(self.cleaned_data.get("temp"), self.site)
        problem = check_temp_c(temp_c, self.site)
        if problem:
            raise forms.ValidationError(problem)
        return temp_c


class EndChargeForm(DatedForm):
    date_field = "ended_at"
    ended_at = _when("Charger back to normal (or off) at")
    notes = forms.CharField(required=False, widget=forms.Textarea(attrs={"rows": 2, "class": "form-control"}))

    def __init__(self, *args, **kwargs):
        kwargs.setdefault("initial", {}).setdefault("ended_at", _now())
        super().__init__(*args, **kwargs)


class SkipForm(forms.Form):
    battery = forms.IntegerField(widget=forms.HiddenInput)
    kind = forms.ChoiceField(choices=[(k, k) for k in KINDS], widget=forms.HiddenInput)
    reason = forms.CharField(max_length=200, label="Why not today?",
                             widget=forms.TextInput(attrs={**BIG, "placeholder": "e.g. truck out on a job, charger fault"}))

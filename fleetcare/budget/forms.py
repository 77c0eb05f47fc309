from decimal import Decimal

from django import forms
from django.utils import timezone

from fleetcare import words
from fleetcare.budget.models import BudgetAssumptions, CapacityTest, ProfileBudget
from fleetcare.chemistry import capacity
from fleetcare.fleet import site_time
from fleetcare.fleet.models import Site
from fleetcare.readings.forms import check_temp_c, to_celsius


def _decimal(label, help_text="", required=False, places=2, digits=7):
    return forms.DecimalField(label=label, required=required, min_value=0, max_digits=digits, decimal_places=places,
                              help_text=help_text, widget=forms.TextInput(attrs={"inputmode": "decimal"}))


class CapacityTestForm(forms.Form):
    """A discharge test as the supervisor recorded it; the result is worked out on saving."""

    battery = forms.ModelChoiceField(queryset=None)
    tested_on = forms.DateField(widget=forms.DateInput(attrs={"type": "date"}))
    rate = forms.ChoiceField(label="Discharge current", choices=CapacityTest.Rate.choices, initial=CapacityTest.Rate.RATED,
                             widget=forms.RadioSelect,
                             help_text="The rated rate is the rated capacity over its hour rate (C5: capacity / 5 h).")
    current_a = _decimal("Current at another rate (A)", "Only for a test at another current.", places=1)
    hours_to_end = _decimal("Time to the end voltage (h)", "Hours as a decimal: 4 h 30 min is 4.5. Or give the Ah delivered.")
    delivered_ah = _decimal("Or: Ah delivered", places=1, digits=8)
    end_volts_per_cell = _decimal("End voltage (V per cell)", "Commonly 1.70 V per cell at the 5-hour rate.",
                                  required=True, digits=4)
    start_temp = forms.DecimalField(label="Electrolyte temperature at the start", max_digits=5, decimal_places=1,
                                    widget=forms.TextInput(attrs={"inputmode": "decimal"}))
    cell_volts = forms.CharField(
        label="Each cell's voltage near the end (optional)", required=False,
        widget=forms.Textarea(attrs={"rows": 2}),
        help_text="In cell order (1.78 1.69 1.77 …), or only some cells as 9=1.68, 14=1.69.")
    notes = forms.CharField(required=False, widget=forms.Textarea(attrs={"rows": 2}))

    def __init__(self, *args, batteries, **kwargs):
        super().__init__(*args, **kwargs)
        self.fields["battery"].queryset = batteries
        self.fields["battery"].label_from_instance = lambda b: f"{b.serial} · {b.site.code}"
        sites = {b.site for b in batteries.select_related("site")}
        # A test is dated by the battery's site clock; one site's form starts on that site's today.
        self.fields["tested_on"].initial = site_time.today_at(next(iter(sites))) if len(sites) == 1 else timezone.localdate()
        self.fields["end_volts_per_cell"].initial = Decimal("1.70")
        units = {site.temp_unit for site in sites}
        unit = "°F" if units == {Site.TempUnit.FAHRENHEIT} else "°C" if units <= {Site.TempUnit.CELSIUS} else \
            "in the battery's site's unit"
        self.fields["start_temp"].label = f"Electrolyte temperature at the start ({unit})"

    def _cell_volts(self, text, battery):
        positions = battery.profile.positions
        volts, words = {}, text.replace(",", " ").split()
        try:
            if any("=" in w for w in words):
                for word in words:
                    position, value = word.split("=", 1)
                    volts[int(position)] = Decimal(value)
            else:
                volts = {n: Decimal(w) for n, w in enumerate(words, start=1)}
        except (ValueError, ArithmeticError):
            raise forms.ValidationError("Write the voltages as numbers, in cell order or as cell=volts.") from None
        if not all(v.is_finite() for v in volts.values()):  # NaN or Infinity: Decimal takes them, they are no voltage
            raise forms.ValidationError("Write the voltages as numbers, in cell order or as cell=volts.")
        if any(not 1 <= p <= positions for p in volts):
            raise forms.ValidationError(f"{battery.serial} has {positions} cells.")
        if any(not Decimal("0") <= v <= Decimal("3") for v in volts.values()):
            raise forms.ValidationError("A cell's voltage near the end of a test is between 0 and 3 V.")
        return volts

    def clean(self):
        data = super().clean()
        battery, tested_on = data.get("battery"), data.get("tested_on")
        if battery and tested_on and tested_on > site_time.today_at(battery):  # the battery's site clock, not the user's
            self.add_error("tested_on", f"A test cannot be dated in the future: it is "
                                        f"{words.day(site_time.today_at(battery))} at {battery.site.name}.")
        elif battery and tested_on and tested_on < battery.in_service_date:
            self.add_error("tested_on", f"{battery} went into service on {words.day(battery.in_service_date)}.")
        if data.get("rate") == CapacityTest.Rate.CURRENT and not data.get("current_a"):
            self.add_error("current_a", "Give the current the test ran at.")
        if data.get("rate") == CapacityTest.Rate.RATED:
            data["current_a"] = None
        hours, ah = data.get("hours_to_end"), data.get("delivered_ah")
        if hours is None and ah is None and "hours_to_end" not in self.errors and "delivered_ah" not in self.errors:
            self.add_error("hours_to_end", "Give the time to the end voltage, or the Ah delivered.")
        elif hours is not None and ah is not None:
            self.add_error("delivered_ah", "Give the time or the Ah delivered, not both.")
        elif (hours == 0) or (ah == 0):
            self.add_error("hours_to_end" if hours == 0 else "delivered_ah", "A test that delivered nothing is not a test.")
        if battery is None:
            return data
        if data.get("start_temp") is not None:
            temp_c = to_celsius(data["start_temp"], battery.site)
            problem = check_temp_c(temp_c, battery.site)
            if problem:
                self.add_error("start_temp", problem)
            data["start_temp_c"] = temp_c
        if data.get("cell_volts"):
            try:
                data["cell_volts_by_position"] = self._cell_volts(data["cell_volts"], battery)
            except forms.ValidationError as exc:
                self.add_error("cell_volts", exc)
        if not self.errors:
            profile = battery.profile
            result = capacity.discharge_test_result(
                capacity_ah=float(profile.capacity_ah), rated_hours=profile.capacity_hour_rate,
                exponent=float(profile.peukert_exponent), start_temp_c=float(data["start_temp_c"]),
                method=profile.capacity_correction, reference_temp_c=float(profile.capacity_reference_temp_c),
                current_a=None if data.get("current_a") is None else float(data["current_a"]),
                hours=None if hours is None else float(hours), measured_ah=None if ah is None else float(ah),
            )
            if not 1 <= result["percent_of_rated"] <= 150:
                self.add_error(None, f"These figures give {result['percent_of_rated']:.0f} % of rated capacity, "
                                     "which cannot be right: check the current, the time and the Ah.")
        return data


class AssumptionsForm(forms.ModelForm):
    class Meta:
        model = BudgetAssumptions
        exclude = ["updated_at", "updated_by"]
        widgets = {"fiscal_year_start_month": forms.Select(choices=[
            (n, name) for n, name in enumerate(
                ("January", "February", "March", "April", "May", "June", "July", "August", "September",
                 "October", "November", "December"), start=1)
        ])}


class ProfileSettingsForm(forms.Form):
    """Per battery profile, all optional: a budget price, an installation cost and a typical depth of discharge."""

    def __init__(self, *args, profiles, **kwargs):
        super().__init__(*args, **kwargs)
        self.profiles = list(profiles)
        saved = {row.profile_id: row for row in ProfileBudget.objects.filter(profile__in=self.profiles)}
        for profile in self.profiles:
            row = saved.get(profile.pk)
            self.fields[f"price_{profile.pk}"] = forms.DecimalField(
                label=f"{profile.name}: budget unit price", required=False, min_value=0, max_digits=10,
                decimal_places=2,
                initial=row.unit_price if row else None,
                help_text=f"Blank uses the profile's unit price, {profile.unit_price:,.2f}.",
            )
            self.fields[f"installation_{profile.pk}"] = forms.DecimalField(
                label=f"{profile.name}: installation per battery", required=False, min_value=0, max_digits=10,
                decimal_places=2, initial=row.installation_cost if row else None,
                help_text="Blank uses the installation per battery above.",
            )
            self.fields[f"depth_{profile.pk}"] = forms.DecimalField(
                label=f"{profile.name}: typical depth of discharge per charge (%)", required=False, min_value=1,
                max_value=100, max_digits=4, decimal_places=1, initial=row.typical_depth_percent if row else None,
                help_text="Used where no state of charge is logged before charging; blank counts each charge as a "
                          "full design cycle (80 % depth).",
            )

    def settings(self):
        """{profile: {"unit_price": ..., "installation_cost": ..., "typical_depth_percent": ...}} (None = blank)"""
        data = self.cleaned_data
        return {
            p: {"unit_price": data.get(f"price_{p.pk}"), "installation_cost": data.get(f"installation_{p.pk}"),
                "typical_depth_percent": data.get(f"depth_{p.pk}")}
            for p in self.profiles
        }

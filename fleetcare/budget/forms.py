from django import forms
from django.utils import timezone

from fleetcare.budget.models import BudgetAssumptions, CapacityTest, ProfileBudget


class CapacityTestForm(forms.ModelForm):
    class Meta:
        model = CapacityTest
        fields = ["battery", "tested_on", "percent_of_rated", "notes"]
        widgets = {
            "tested_on": forms.DateInput(attrs={"type": "date"}),
            "percent_of_rated": forms.NumberInput(attrs={"step": "0.1", "inputmode": "decimal"}),
            "notes": forms.Textarea(attrs={"rows": 2}),
        }
        help_texts = {"percent_of_rated": "Capacity the discharge test delivered, as % of the rated Ah."}

    def __init__(self, *args, batteries, **kwargs):
        super().__init__(*args, **kwargs)
        self.fields["battery"].queryset = batteries
        self.fields["battery"].label_from_instance = lambda b: f"{b.serial} · {b.site.code}"
        self.fields["tested_on"].initial = timezone.localdate()

    def clean_tested_on(self):
        tested_on = self.cleaned_data["tested_on"]
        if tested_on > timezone.localdate():
            raise forms.ValidationError("A test cannot be dated in the future.")
        return tested_on

    def clean(self):
        data = super().clean()
        battery, tested_on = data.get("battery"), data.get("tested_on")
        if battery and tested_on and tested_on < battery.in_service_date:
            self.add_error("tested_on", f"{battery} went into service on {battery.in_service_date:%Y-%m-%d}.")
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

from django import forms

from fleetcare.dashboard import settings_page


class ChangeSettingForm(forms.Form):
    """One setting at one level: a value, or blank to inherit from the level below."""

    key = forms.CharField(widget=forms.HiddenInput)
    scope = forms.ChoiceField(label="Set it for", choices=settings_page.SCOPES, initial="site_profile")
    value = forms.CharField(label="Value", required=False, max_length=20,
                            help_text="Blank: use the level below (profile, then the built-in default).")
    note = forms.CharField(label="Why", required=False, max_length=200)

    def clean(self):
        data = super().clean()
        field = settings_page.setting_field(data.get("key", ""))
        if field is None:
            raise forms.ValidationError("There is no such setting.")
        try:
            data["value"] = field.clean((data.get("value") or "").strip() or None)
        except forms.ValidationError as error:
            self.add_error("value", error)
        return data

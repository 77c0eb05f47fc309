from django import forms

from fleetcare.care.models import Finding

STATE_CHOICES = [("active", "Open or acknowledged"), *Finding.State.choices, ("all", "All, with history")]


class FindingFilterForm(forms.Form):
    site = forms.ChoiceField(required=False)
    kind = forms.ChoiceField(required=False, choices=[("", "Any kind"), *Finding.Kind.choices])
    battery = forms.CharField(required=False, label="Battery serial", max_length=60)
    state = forms.ChoiceField(required=False, choices=STATE_CHOICES)

    def __init__(self, *args, sites=(), **kwargs):
        super().__init__(*args, **kwargs)
        self.fields["site"].choices = [("", "All my sites"), *[(s.code, s.name) for s in sites]]


class AcknowledgeForm(forms.Form):
    comment = forms.CharField(
        widget=forms.Textarea(attrs={"rows": 2}), max_length=2000,
        help_text="What will be done, or why nothing will. Kept with the finding.",
    )

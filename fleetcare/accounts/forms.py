from django import forms
from django.contrib.auth.forms import AuthenticationForm

from fleetcare.accounts import throttle


class SignInForm(AuthenticationForm):
    """Django's sign-in form, saying plainly when sign-in is paused after repeated failures."""

    error_messages = {
        **AuthenticationForm.error_messages,
        "invalid_login": "That username and password do not match. Both are case-sensitive.",
    }

    def clean(self):
        username = self.cleaned_data.get("username")
        attempt = throttle.Attempt.of(self.request, username) if username else None
        lock = throttle.lock_for(attempt) if attempt else None
        if lock:
            raise forms.ValidationError(throttle.lock_message(lock), code="throttled")
        try:
            return super().clean()
        except forms.ValidationError:
            lock = throttle.lock_for(attempt) if attempt else None
            if lock:
                raise forms.ValidationError(throttle.lock_message(lock), code="throttled") from None
            raise


class ReasonForm(forms.Form):
    """Why a stored reading is being corrected or removed: kept with the change for good."""

    reason = forms.CharField(
        max_length=200, strip=True,
        widget=forms.TextInput(attrs={"class": "form-control form-control-lg", "autocomplete": "off"}),
        help_text="Say what was wrong, e.g. “cell 7 typed as 1.125, hydrometer showed 1.225”.",
    )

    def clean_reason(self):
        reason = self.cleaned_data["reason"]
        if len(reason) < 5:
            raise forms.ValidationError("Give a reason of at least a few words: it is kept with the record.")
        return reason

from django.contrib.auth.views import LoginView

from fleetcare.accounts.access import public_view
from fleetcare.accounts.forms import SignInForm

sign_in = public_view(LoginView.as_view(form_class=SignInForm, template_name="registration/login.html"))

"""Sign-in is ours (it is throttled); sign-out and password change are Django's own views."""
from django.contrib.auth import views as auth_views
from django.urls import path

from fleetcare.accounts import views

urlpatterns = [
    path("login/", views.sign_in, name="login"),
    path("logout/", auth_views.LogoutView.as_view(), name="logout"),
    path("password_change/", auth_views.PasswordChangeView.as_view(), name="password_change"),
    path("password_change/done/", auth_views.PasswordChangeDoneView.as_view(), name="password_change_done"),
]

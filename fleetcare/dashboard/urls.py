from django.urls import path

from fleetcare.dashboard import views

app_name = "dashboard"
urlpatterns = [
    path("", views.home, name="home"),
    path("start/", views.start, name="start"),
    path("settings/", views.settings_home, name="settings"),
    path("settings/<str:code>/", views.settings_site, name="settings_site"),
    path("settings/<str:code>/change/", views.change_setting, name="change_setting"),
]

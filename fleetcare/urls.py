from django.contrib import admin
from django.urls import include, path

urlpatterns = [
    path("", include("fleetcare.dashboard.urls")),
    path("accounts/", include("fleetcare.accounts.urls")),
    path("batteries/", include("fleetcare.fleet.urls")),
    path("readings/", include("fleetcare.readings.urls")),
    path("care/", include("fleetcare.care.urls")),
    path("budget/", include("fleetcare.budget.urls")),
    path("planner/", include("fleetcare.planner.urls")),
    path("api/", include("fleetcare.api.urls")),
    path("admin/", admin.site.urls),
]

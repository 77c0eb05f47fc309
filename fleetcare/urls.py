from django.contrib import admin
from django.urls import include, path

from fleetcare.tablet.views import service_worker

urlpatterns = [
    path("", include("fleetcare.dashboard.urls")),
    path("accounts/", include("fleetcare.accounts.urls")),
    path("batteries/", include("fleetcare.dashboard.battery_urls")),
    path("readings/", include("fleetcare.readings.urls")),
    path("labels/", include("fleetcare.labels.urls")),
    path("care/", include("fleetcare.care.urls")),
    path("budget/", include("fleetcare.budget.urls")),
    path("planner/", include("fleetcare.planner.urls")),
    path("api/", include("fleetcare.tablet.urls")),
    path("api/", include("fleetcare.api.urls")),
    path("sw.js", service_worker, name="service_worker"),
    path("admin/", admin.site.urls),
]

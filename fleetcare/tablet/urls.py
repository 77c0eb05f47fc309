"""The offline pages keep their addresses under /api/: tablets already hold them in their service worker's cache."""
from django.urls import path

from fleetcare.tablet import views

app_name = "tablet"

urlpatterns = [
    path("offline/", views.offline, name="offline"),
    path("outbox/", views.outbox, name="outbox"),
]

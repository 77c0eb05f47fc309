from django.urls import path

from fleetcare.labels import views

app_name = "labels"
urlpatterns = [
    path("", views.print_labels, name="print"),
    path("scan/", views.scan, name="scan"),
    path("sheet/<slug:site>.pdf", views.sheet, name="sheet"),
    # What a label's QR code holds (keep it short: a shorter address makes a coarser, easier code).
    path("b/<slug:site>/<path:serial>/", views.battery, name="battery"),
]

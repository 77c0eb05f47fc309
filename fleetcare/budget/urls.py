from django.urls import path

from fleetcare.budget import views

app_name = "budget"
urlpatterns = [
    path("", views.budget_page, name="home"),
    path("export.csv", views.export, {"fmt": "csv"}, name="export_csv"),
    path("export.xlsx", views.export, {"fmt": "xlsx"}, name="export_xlsx"),
    path("assumptions/", views.assumptions, name="assumptions"),
    path("capacity-tests/", views.capacity_tests, name="capacity_tests"),
]

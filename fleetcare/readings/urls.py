from django.urls import path

from fleetcare.readings import views

app_name = "readings"
urlpatterns = [
    path("find/", views.find_battery, name="find"),
    path("battery/<int:pk>/inspect/", views.inspect, name="inspect"),
    path("battery/<int:pk>/water/", views.top_up, name="top_up"),
    path("battery/<int:pk>/readings.csv", views.export_csv, name="export_csv"),
    path("inspection/<int:pk>/", views.inspection_detail, name="inspection"),
    path("inspection/<int:pk>/correct/", views.correct_inspection, name="correct"),
    path("inspection/<int:pk>/remove/", views.remove_inspection, name="remove"),
    path("water/<int:pk>/remove/", views.remove_top_up, name="remove_top_up"),
    path("import/", views.import_csv, name="import"),
    path("import/<uuid:import_id>/", views.import_result, name="import_result"),
    path("import/<uuid:import_id>/progress/", views.import_progress, name="import_progress"),
    path("import/<uuid:import_id>/notes.csv", views.import_notes, name="import_notes"),
]

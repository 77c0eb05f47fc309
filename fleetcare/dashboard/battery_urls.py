from django.urls import path

from fleetcare.dashboard import battery_views as views

app_name = "fleet"  # the battery pages kept their URL names (fleet:batteries, fleet:battery) when they moved here
urlpatterns = [
    path("", views.battery_list, name="batteries"),
    path("<int:pk>/", views.battery_detail, name="battery"),
]

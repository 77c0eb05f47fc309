from django.urls import path

from fleetcare.fleet import views

app_name = "fleet"
urlpatterns = [
    path("", views.battery_list, name="batteries"),
    path("<int:pk>/", views.battery_detail, name="battery"),
]

from django.urls import path

from fleetcare.care import views

app_name = "care"
urlpatterns = [
    path("findings/", views.finding_list, name="findings"),
    path("findings/check/", views.check_now, name="check_now"),
    path("findings/<int:pk>/", views.finding_detail, name="finding"),
    path("findings/<int:pk>/acknowledge/", views.acknowledge, name="acknowledge"),
]

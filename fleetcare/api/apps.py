from django.apps import AppConfig


class ApiConfig(AppConfig):
    name = "fleetcare.api"
    label = "api"

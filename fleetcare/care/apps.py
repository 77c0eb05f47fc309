from django.apps import AppConfig


class CareConfig(AppConfig):
    name = "fleetcare.care"
    label = "care"

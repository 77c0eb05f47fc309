from django.apps import AppConfig


class ReadingsConfig(AppConfig):
    name = "fleetcare.readings"
    label = "readings"

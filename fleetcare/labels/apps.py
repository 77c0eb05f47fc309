from django.apps import AppConfig


class LabelsConfig(AppConfig):
    name = "fleetcare.labels"
    label = "labels"
    verbose_name = "Battery labels"

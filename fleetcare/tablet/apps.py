from django.apps import AppConfig


class TabletConfig(AppConfig):
    name = "fleetcare.tablet"
    label = "tablet"
    verbose_name = "Tablet offline use"

from django.apps import AppConfig


class DemoConfig(AppConfig):
    name = "fleetcare.demo"
    label = "demo"
    verbose_name = "Demo fleet"

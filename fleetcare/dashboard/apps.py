from django.apps import AppConfig


class DashboardConfig(AppConfig):
    name = "fleetcare.dashboard"
    label = "dashboard"

from django.apps import AppConfig


class PlannerConfig(AppConfig):
    name = "fleetcare.planner"
    label = "planner"

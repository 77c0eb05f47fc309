from django.apps import AppConfig


class PlannerConfig(AppConfig):
    name = "fleetcare.planner"
    label = "planner"

    def ready(self):
        from fleetcare.care import detection
        from fleetcare.planner import selectors

        detection.register_temperature_source(selectors.equalizing_temperatures)

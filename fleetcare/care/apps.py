from django.apps import AppConfig


class CareConfig(AppConfig):
    name = "fleetcare.care"
    label = "care"
    verbose_name = "Findings and care"

    def ready(self):
        from fleetcare.care import detection
        from fleetcare.readings import signals

        signals.inspection_recorded.connect(detection.on_inspection_recorded, dispatch_uid="care-detect-inspection")
        signals.top_up_recorded.connect(detection.on_top_up_recorded, dispatch_uid="care-detect-top-up")

from django.apps import AppConfig


class CareConfig(AppConfig):
    name = "fleetcare.care"
    label = "care"
    verbose_name = "Findings and care"

    def ready(self):
        from django.db.models.signals import post_save

        from fleetcare.readings.models import ReadingChange
        from fleetcare.care import detection, tasks
        from fleetcare.readings import signals

        signals.inspection_recorded.connect(detection.on_inspection_recorded, dispatch_uid="care-detect-inspection")
        signals.inspections_imported.connect(tasks.after_import, dispatch_uid="care-detect-import")
        signals.top_up_recorded.connect(detection.on_top_up_recorded, dispatch_uid="care-detect-top-up")
        post_save.connect(detection.on_reading_change, sender=ReadingChange, dispatch_uid="care-detect-removal")

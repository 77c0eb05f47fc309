from django.apps import AppConfig


class ApiConfig(AppConfig):
    name = "fleetcare.api"
    label = "api"

    def ready(self):
        from fleetcare.api import signals  # noqa: F401  (connects the password-change receiver)

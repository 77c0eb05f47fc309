from django.apps import AppConfig


class BudgetConfig(AppConfig):
    name = "fleetcare.budget"
    label = "budget"

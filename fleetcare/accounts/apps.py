from django.apps import AppConfig


class AccountsConfig(AppConfig):
    name = "fleetcare.accounts"
    label = "accounts"

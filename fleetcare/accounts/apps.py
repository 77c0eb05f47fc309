from django.apps import AppConfig
from django.db.models.signals import post_migrate


def _create_role_groups(**kwargs):
    from fleetcare.accounts.roles import ensure_groups

    ensure_groups()


class AccountsConfig(AppConfig):
    name = "fleetcare.accounts"
    label = "accounts"

    def ready(self):
        post_migrate.connect(_create_role_groups, sender=self)

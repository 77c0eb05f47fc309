from django.apps import AppConfig
from django.db.models.signals import post_migrate


def fill_missing_state(sender, using="default", **kwargs):
    """After migrating, batteries with history but no kept state (a fleet that predates the state table) get it
    from their history, by the live rule of `manage.py rebuild_battery_state`, once the whole schema is in place."""
    from django.db import DEFAULT_DB_ALIAS, transaction
    from django.db.models import Exists, OuterRef, Q

    from fleetcare.fleet.models import Battery
    from fleetcare.readings import state
    from fleetcare.readings.models import BatteryState, Inspection, WaterTopUp

    if using != DEFAULT_DB_ALIAS:  # a read replica follows the primary; it is never written to
        return
    missing = list(
        Battery.objects.using(using)
        .filter(~Exists(BatteryState.objects.using(using).filter(battery=OuterRef("pk"))))
        .filter(Q(Exists(Inspection.objects.using(using).filter(battery=OuterRef("pk"))))
                | Q(Exists(WaterTopUp.objects.using(using).filter(battery=OuterRef("pk")))))
        .values_list("pk", flat=True)
    )
    if missing:
        with transaction.atomic(using=using):
            state.rebuild(missing)


class ReadingsConfig(AppConfig):
    name = "fleetcare.readings"
    label = "readings"

    def ready(self):
        post_migrate.connect(fill_missing_state, sender=self, dispatch_uid="readings.fill_missing_state")

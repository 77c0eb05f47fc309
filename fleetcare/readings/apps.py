from django.apps import AppConfig
from django.db.models.signals import post_migrate


def fill_missing_state(sender, using="default", **kwargs):
    """After migrating, batteries with history but no kept state (a fleet that predates the state table) get it
    from their history, by the live rule of `manage.py rebuild_battery_state`, once the whole schema is in place."""
    from django.db import DEFAULT_DB_ALIAS, transaction
    from django.db.models import Exists, OuterRef, Q

    from fleetcare.fleet.models import Battery
    from fleetcare.readings import state
    from fleetcare.readings.models import BatteryMonth, BatteryState, Inspection, WaterTopUp

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
    # Batteries with something the monthly totals count but no month kept (a fleet from before that table).
    no_months = list(
        Battery.objects.using(using)
        .filter(~Exists(BatteryMonth.objects.using(using).filter(battery=OuterRef("pk"))))
        .filter(Q(Exists(Inspection.objects.using(using).current().filter(state.COUNTS_FOR_DEPTH, battery=OuterRef("pk"))))
                | Q(Exists(WaterTopUp.objects.using(using).current().filter(battery=OuterRef("pk")))))
        .values_list("pk", flat=True)
    )
    for start in range(0, len(no_months), state.CHUNK):
        with transaction.atomic(using=using):
            part = no_months[start:start + state.CHUNK]
            state.lock(part)
            state.refresh_months(part)


class ReadingsConfig(AppConfig):
    name = "fleetcare.readings"
    label = "readings"

    def ready(self):
        from django.db.models.signals import post_save, pre_save

        from fleetcare.fleet.models import Battery, Site
        from fleetcare.readings import state

        post_migrate.connect(fill_missing_state, sender=self, dispatch_uid="readings.fill_missing_state")
        for model in (Battery, Site):
            pre_save.connect(state.remember_zone, sender=model, dispatch_uid=f"readings.remember_zone.{model.__name__}")
            post_save.connect(state.follow_zone, sender=model, dispatch_uid=f"readings.follow_zone.{model.__name__}")

from django.db import migrations


def move_to_planning_policy(apps, schema_editor):
    """A watering interval set in a findings policy becomes the planning policy's, where that one is not set."""
    CarePolicy = apps.get_model("care", "Policy")
    PlanningPolicy = apps.get_model("planner", "Policy")
    for row in CarePolicy.objects.exclude(watering_interval_days__isnull=True):
        planning, _ = PlanningPolicy.objects.get_or_create(site_id=row.site_id, profile_id=row.profile_id)
        if planning.water_every_days is None:
            planning.water_every_days = row.watering_interval_days
            planning.save(update_fields=["water_every_days"])


class Migration(migrations.Migration):

    dependencies = [
        ("care", "0005_equalizing_control"),
        ("planner", "0002_equalizing_control"),
    ]

    operations = [
        migrations.RunPython(move_to_planning_policy, migrations.RunPython.noop),
        migrations.RemoveField(
            model_name="policy",
            name="watering_interval_days",
        ),
    ]

"""The audit trail of changes to stored readings, and failed sign-ins for throttling."""
from django.conf import settings
from django.db import models


class ReadingChange(models.Model):
    """Who corrected or removed a reading, when and why. Rows are only ever added."""

    class Action(models.TextChoices):
        CORRECTED = "corrected", "Corrected"
        REMOVED = "removed", "Removed"

    battery = models.ForeignKey("fleet.Battery", on_delete=models.PROTECT, related_name="reading_changes")
    action = models.CharField(max_length=10, choices=Action.choices)
    inspection = models.ForeignKey(
        "readings.Inspection", on_delete=models.PROTECT, null=True, blank=True, related_name="changes",
        help_text="The inspection revision that was corrected or removed.",
    )
    new_revision = models.OneToOneField(
        "readings.Inspection", on_delete=models.PROTECT, null=True, blank=True, related_name="made_by_change",
        help_text="The revision a correction stored.",
    )
    top_up = models.ForeignKey("readings.WaterTopUp", on_delete=models.PROTECT, null=True, blank=True, related_name="changes")
    changed_by = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.PROTECT, related_name="reading_changes")
    changed_at = models.DateTimeField(auto_now_add=True)
    reason = models.CharField(max_length=200)

    class Meta:
        ordering = ["-changed_at", "-pk"]
        indexes = [models.Index(fields=["battery", "-changed_at"], name="reading_change_battery_time")]
        constraints = [
            models.CheckConstraint(
                condition=models.Q(inspection__isnull=False, top_up__isnull=True)
                | models.Q(inspection__isnull=True, top_up__isnull=False),
                name="reading_change_names_one_record",
            ),
        ]

    def __str__(self):
        what = f"inspection {self.inspection_id}" if self.inspection_id else f"top-up {self.top_up_id}"
        return f"{what} {self.action} by {self.changed_by_id}: {self.reason}"

    @property
    def what(self):
        return "reading" if self.inspection_id else "water top-up"


class SignInFailure(models.Model):
    """One failed sign-in. A table of our own (not a cache) so every web worker counts the same rows."""

    username = models.CharField(max_length=150)
    ip_address = models.GenericIPAddressField(null=True, blank=True)
    failed_at = models.DateTimeField(db_index=True)

    class Meta:
        indexes = [models.Index(fields=["username", "ip_address", "failed_at"], name="signin_failure_lookup")]

    def __str__(self):
        return f"{self.username} from {self.ip_address} at {self.failed_at:%Y-%m-%d %H:%M}"

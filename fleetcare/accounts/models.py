"""Failed sign-ins, counted for throttling."""
from django.db import models


class SignInFailure(models.Model):
    """One failed sign-in. A table of our own (not a cache) so every web worker counts the same rows."""

    username = models.CharField(max_length=150)
    ip_address = models.GenericIPAddressField(null=True, blank=True)
    device = models.CharField(max_length=32, blank=True, default="", help_text="The known-device cookie's id, if any.")
    failed_at = models.DateTimeField(db_index=True)

    class Meta:
        indexes = [
            models.Index(fields=["username", "ip_address", "failed_at"], name="signin_failure_lookup"),
            models.Index(fields=["ip_address", "failed_at"], name="signin_failure_by_address"),
        ]

    def __str__(self):
        return f"{self.username} from {self.ip_address} at {self.failed_at:%Y-%m-%d %H:%M}"

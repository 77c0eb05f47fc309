"""Tokens that let another program use the API as one user, without that user's password.

Only a SHA-256 digest of each token is stored: the token itself is shown once, when it is made.
"""
from django.conf import settings
from django.db import models
from django.utils import timezone


class ApiTokenQuerySet(models.QuerySet):
    def live(self):
        return self.filter(revoked_at__isnull=True)


class ApiToken(models.Model):
    user = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.CASCADE, related_name="api_tokens")
    name = models.CharField(max_length=80, help_text="What uses it, for example “stores system nightly export”.")
    prefix = models.CharField(max_length=12, help_text="The token's first characters, to tell tokens apart.")
    digest = models.CharField(max_length=64, unique=True, help_text="SHA-256 of the token, hex.")
    created_at = models.DateTimeField(default=timezone.now)
    last_used_at = models.DateTimeField(null=True, blank=True)
    revoked_at = models.DateTimeField(null=True, blank=True)

    objects = ApiTokenQuerySet.as_manager()

    class Meta:
        ordering = ["-created_at"]

    def __str__(self):
        state = "revoked" if self.revoked_at else "live"
        return f"{self.user} · {self.name} ({self.prefix}…, {state})"

    @property
    def is_live(self):
        return self.revoked_at is None

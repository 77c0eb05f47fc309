"""Planning policy, per-room and per-site settings, equalizing charge records and the stored plans.

A stored plan is keyed by site, start date, length and a fingerprint of everything it was built from
(readings, top-ups, equalizing records, findings, policies, rooms): any change gives a new
fingerprint, so a page rebuilds the plan instead of showing a stale one.
"""
import secrets
import uuid

from django.conf import settings
from django.core.validators import MinValueValidator
from django.db import models
from django.db.models import Q

from fleetcare.fleet.models import Battery, BatteryProfile, ChargingRoom, Site
from fleetcare import policy_layers
from fleetcare.planner.policy import SETTINGS


class Policy(policy_layers.LayeredPolicy):
    """Planning overrides (fleetcare.planner.policy.SETTINGS)."""

    class Meta(policy_layers.LayeredPolicy.Meta):
        verbose_name = "planning policy"
        verbose_name_plural = "planning policies"
        constraints = policy_layers.scope_constraints("planning_policy")


policy_layers.add_setting_columns(Policy, SETTINGS, max_digits=6, decimal_places=2)


def new_feed_token():
    return secrets.token_urlsafe(24)


class SiteSettings(models.Model):
    """Per-site planner settings: the crew's watering capacity and the calendar feed's secret address."""

    site = models.OneToOneField(Site, on_delete=models.CASCADE, related_name="planner_settings")
    waterings_per_day = models.PositiveSmallIntegerField(
        null=True, blank=True, help_text="Most batteries the crew can water in a day. Blank: no limit.")
    feed_token = models.CharField(max_length=64, unique=True, default=new_feed_token,
                                  help_text="Secret part of the calendar feed address; make a new one to revoke it.")

    class Meta:
        verbose_name = "site planner settings"
        verbose_name_plural = "site planner settings"

    def __str__(self):
        return f"planner settings for {self.site_id}"


class RoomSettings(models.Model):
    """How much of a charging room's ventilation normal charging already takes."""

    room = models.OneToOneField(ChargingRoom, on_delete=models.CASCADE, related_name="planner_settings")
    charging_at_once = models.PositiveSmallIntegerField(
        null=True, blank=True,
        help_text="Batteries on a normal charge at the same time while equalizing is planned. Blank: every charger.")
    baseline_airflow_m3h = models.DecimalField(
        "airflow normal charging takes (m³/h)", max_digits=8, decimal_places=1, null=True, blank=True,
        validators=[MinValueValidator(0)],
        help_text="Overrides the figure worked out from the batteries on charge (from a ventilation survey).")
    note = models.CharField(max_length=200, blank=True)

    class Meta:
        verbose_name = "charging room planner settings"
        verbose_name_plural = "charging room planner settings"

    def __str__(self):
        return f"planner settings for room {self.room_id}"


class EqualizingChargeQuerySet(models.QuerySet):
    def running(self):
        return self.filter(ended_at__isnull=True)


class EqualizingCharge(models.Model):
    battery = models.ForeignKey(Battery, on_delete=models.PROTECT, related_name="equalizing_charges")
    started_at = models.DateTimeField(db_index=True)
    ended_at = models.DateTimeField(null=True, blank=True)
    by = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.PROTECT, related_name="equalizing_charges")
    notes = models.TextField(blank=True)
    client_uuid = models.UUIDField(default=uuid.uuid4, unique=True, help_text="Set by the form; a resend stores nothing new.")
    recorded_at = models.DateTimeField(auto_now_add=True)

    objects = EqualizingChargeQuerySet.as_manager()

    class Meta:
        ordering = ["-started_at"]
        constraints = [
            models.UniqueConstraint(fields=["battery"], condition=Q(ended_at__isnull=True),
                                    name="one_running_equalizing_charge_per_battery"),
            models.CheckConstraint(condition=Q(ended_at__isnull=True) | Q(ended_at__gte=models.F("started_at")),
                                   name="equalizing_ends_after_it_starts"),
        ]

    def __str__(self):
        return f"{self.battery} equalizing from {self.started_at:%Y-%m-%d %H:%M}"


class EqualizingReading(models.Model):
    class Basis(models.TextChoices):
        PILOT = "pilot", "Pilot cell"
        AVERAGE = "average", "Average of the cells read"

    charge = models.ForeignKey(EqualizingCharge, on_delete=models.CASCADE, related_name="readings")
    taken_at = models.DateTimeField()
    basis = models.CharField(max_length=8, choices=Basis.choices, default=Basis.PILOT)
    sg = models.DecimalField("observed SG", max_digits=5, decimal_places=3)
    temp_c = models.DecimalField("electrolyte temperature (°C)", max_digits=4, decimal_places=1, null=True, blank=True)
    sg_corrected = models.DecimalField("corrected SG", max_digits=5, decimal_places=3)
    volts = models.DecimalField("battery volts", max_digits=6, decimal_places=2, null=True, blank=True)
    client_uuid = models.UUIDField(default=uuid.uuid4, unique=True)

    class Meta:
        ordering = ["charge", "taken_at", "pk"]

    def __str__(self):
        return f"{self.charge_id} {self.taken_at:%H:%M} {self.sg_corrected}"


class TaskSkip(models.Model):
    """A task the crew could not do today, and why (the task stays due; the list shows the reason)."""

    battery = models.ForeignKey(Battery, on_delete=models.CASCADE, related_name="planner_skips")
    kind = models.CharField(max_length=12)
    day = models.DateField()
    reason = models.CharField(max_length=200)
    by = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.PROTECT, related_name="+")
    at = models.DateTimeField(auto_now_add=True)

    class Meta:
        ordering = ["-at"]

    def __str__(self):
        return f"{self.battery} {self.kind} skipped on {self.day}"


class StoredPlan(models.Model):
    site = models.ForeignKey(Site, on_delete=models.CASCADE, related_name="stored_plans")
    start_date = models.DateField()
    days = models.PositiveSmallIntegerField()
    fingerprint = models.CharField(max_length=64)
    plan_json = models.JSONField()
    built_at = models.DateTimeField()
    build_seconds = models.FloatField(default=0)

    class Meta:
        constraints = [models.UniqueConstraint(fields=["site", "start_date", "days"], name="one_stored_plan_per_site_day")]

    def __str__(self):
        return f"plan {self.site_id} {self.start_date} +{self.days}"

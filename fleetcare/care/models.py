"""Findings (what a supervisor acts on) and the policy thresholds they are judged by.

A finding opens when detection sees a fault, stays open (or acknowledged) while later readings still
show it, and clears itself when they no longer do; cleared rows are kept as history. At most one
active finding per battery and kind exists (a partial unique constraint guards it).
"""
from django.conf import settings
from django.db import models
from django.db.models import Q

from fleetcare import policy_layers
from fleetcare.care import wording
from fleetcare.care.policy import THRESHOLDS
from fleetcare.fleet.models import Battery, BatteryProfile, Site


class FindingQuerySet(models.QuerySet):
    def active(self):
        """Open or acknowledged: still shown by the latest readings."""
        return self.filter(state__in=Finding.ACTIVE)

    def visible_to(self, user):
        """Findings of the batteries the user may see (the access rules live in fleetcare.fleet.access)."""
        from fleetcare.fleet.access import visible_batteries

        return self.filter(battery__in=visible_batteries(user))


class Finding(models.Model):
    class Kind(models.TextChoices):
        WEAK_CELL = "weak_cell", "Weak cell"
        HIGH_SPREAD = "high_spread", "High spread: equalizing charge needed"
        SULFATION = "sulfation", "Suspected sulfation"
        DEEP_DISCHARGE = "deep_discharge", "Deep discharge"
        LEFT_DISCHARGED = "left_discharged", "Left discharged: charge now"
        HOT_BATTERY = "hot_battery", "Hot battery"
        LOW_LEVEL = "low_level", "Low electrolyte level"
        WATERING_OVERDUE = "watering_overdue", "Watering overdue"
        HIGH_WATER_USE = "high_water_use", "High water use (overcharge)"
        WATER_BEFORE_CHARGE = "water_before_charge", "Water added before charge"
        WEAK_BLOCK = "weak_block", "Weak block in a pair"
        AGEING = "ageing", "Past design life"

    class State(models.TextChoices):
        OPEN = "open", "Open"
        ACKNOWLEDGED = "acknowledged", "Acknowledged"
        CLEARED = "cleared", "Cleared"

    class Severity(models.IntegerChoices):
        INFO = 1, "Note"
        WARNING = 2, "Warning"
        URGENT = 3, "Urgent"

    ACTIVE = (State.OPEN, State.ACKNOWLEDGED)

    battery = models.ForeignKey(Battery, on_delete=models.CASCADE, related_name="findings")
    kind = models.CharField(max_length=24, choices=Kind.choices)
    state = models.CharField(max_length=12, choices=State.choices, default=State.OPEN)
    severity = models.PositiveSmallIntegerField("how urgent", choices=Severity.choices, default=Severity.WARNING)
    positions = models.JSONField(default=list, blank=True, help_text="Cell or block numbers concerned.")
    persistent = models.BooleanField(
        default=False, help_text="Seen on two or more consecutive post-charge inspections."
    )
    opened_at = models.DateTimeField()
    # Rewritten on every active finding by every findings pass: kept out of every index, so that the rewrite
    # stays beside the old row version in the room the table leaves on each page (migration 0012).
    last_seen_at = models.DateTimeField()
    cleared_at = models.DateTimeField(null=True, blank=True)
    inspection = models.ForeignKey(
        "readings.Inspection", on_delete=models.SET_NULL, null=True, blank=True, related_name="findings",
        help_text="The latest inspection that showed it, if an inspection did.",
    )
    evidence = models.JSONField(default=dict, blank=True, help_text="Readings used, threshold and its source.")
    summary = models.TextField(blank=True)
    # What the findings pass last wrote (severity, positions, persistence, evidence, summary, inspection), as a
    # digest: a pass compares its new answer with this instead of reading every active finding's evidence back.
    content_digest = models.CharField(max_length=64, blank=True, editable=False)
    acknowledged_by = models.ForeignKey(
        settings.AUTH_USER_MODEL, on_delete=models.SET_NULL, null=True, blank=True, related_name="+"
    )
    acknowledged_at = models.DateTimeField(null=True, blank=True)
    acknowledged_comment = models.TextField(blank=True)

    objects = FindingQuerySet.as_manager()

    class Meta:
        ordering = ["-severity", "-opened_at"]
        constraints = [
            models.UniqueConstraint(
                fields=["battery", "kind"], condition=Q(state__in=["open", "acknowledged"]),
                name="one_active_finding_per_battery_kind",
            ),
        ]
        indexes = [
            models.Index(fields=["state", "kind"], name="finding_state_kind"),
            # Findings opened or cleared lately (the overview's weekly chart) without reading every finding ever.
            models.Index(fields=["opened_at"], name="finding_opened_at"),
            models.Index(fields=["cleared_at"], name="finding_cleared_at"),
        ]

    def __str__(self):
        where = f" {self.position_label}" if self.positions else ""
        return f"{self.battery} {self.get_kind_display()}{where} ({self.get_state_display()})"

    @property
    def is_active(self):
        return self.state in self.ACTIVE

    def _failing_after_equalizing(self):
        readings = (self.evidence or {}).get("readings") or []
        return {int(c["position"]) for r in readings for c in r.get("cells") or ()
                if "failing" in (c.get("reasons") or ())}

    @property
    def failing_positions(self):
        """Cells this finding calls failing: still low after equalizing, or low on consecutive post-charge readings.

        A cell low once after an ordinary charge is weak, not failing: it needs an equalizing charge first.
        """
        if self.kind != self.Kind.WEAK_CELL:
            return []
        failing = self._failing_after_equalizing()
        if self.persistent:
            failing |= {int(p) for p in self.positions or ()}
        return sorted(failing)

    @property
    def failing_because(self):
        """The finding's own words for why its cells are failing ("" when none is)."""
        if not self.failing_positions:
            return ""
        return wording.FAILING_AFTER_EQUALIZING if self._failing_after_equalizing() else wording.LOW_ON_CONSECUTIVE

    @property
    def position_label(self):
        if not self.positions:
            return ""
        word = "block" if self.kind == self.Kind.WEAK_BLOCK else "cell"
        plural = "s" if len(self.positions) > 1 else ""
        return f"{word}{plural} " + ", ".join(str(p) for p in self.positions)


class Policy(policy_layers.LayeredPolicy):
    """Findings threshold overrides (fleetcare.care.policy.THRESHOLDS)."""

    class Meta(policy_layers.LayeredPolicy.Meta):
        verbose_name = "findings policy"
        verbose_name_plural = "findings policies"
        constraints = policy_layers.scope_constraints("policy")


policy_layers.add_setting_columns(Policy, THRESHOLDS, max_digits=8, decimal_places=3)

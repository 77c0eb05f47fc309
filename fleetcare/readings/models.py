"""What the crew records: inspections with their cell readings, and water top-ups; and who corrected them.

An inspection is never edited in place: a correction stores a new revision that supersedes the
old one, and a deletion only marks the row. Findings, charts and budgets read current revisions.
"""
import uuid

from django.conf import settings
from django.db import models
from django.db.models import Q

from fleetcare import policy_layers
from fleetcare.fleet.models import Battery, BatteryProfile, Site
from fleetcare.readings.validation import SETTINGS as ENTRY_SETTINGS

# Electrolyte temperatures over this are indexed for the hot-battery finding (fleetcare.care.detection): rare, so
# the finding reads them without reading every reading of its look-back. Below any hot limit in use (the
# default is 55 °C; field notes, "Measuring well"). Not a threshold: a site limit under it still works, slower.
HOT_INDEX_FLOOR_C = 40


class InspectionQuerySet(models.QuerySet):
    def current(self):
        return self.filter(is_current=True, deleted_at__isnull=True)

    def visible_to(self, user):
        return self.filter(battery__in=Battery.objects.visible_to(user))

    def post_charge(self):
        return self.filter(situation__in=Inspection.POST_CHARGE)

    def shows_state_of_charge(self):
        """Readings whose state of charge describes the battery: after a charge, or rested. A reading before
        charge or in use shows how far it was run down (a deep discharge), not the state it is kept in."""
        return self.filter(situation__in=Inspection.SHOWS_STATE_OF_CHARGE, soc_percent__isnull=False)


class Inspection(models.Model):
    class Situation(models.TextChoices):
        JUST_CHARGED = "charged", "Just charged"
        JUST_EQUALIZED = "equalized", "Just equalized"
        RESTED = "rested", "Rested (off charge and load)"
        IN_USE = "in_use", "In use"
        BEFORE_CHARGE = "before_charge", "Before charge"

    class Scope(models.TextChoices):
        ALL_CELLS = "all", "All cells"
        PILOT = "pilot", "Pilot cell"

    class ChosenVia(models.TextChoices):
        """How the person found the battery before taking the reading: a scanned label is the surest way."""

        SCAN = "scan", "Label scanned"
        SEARCH = "search", "Found by serial or truck search"
        TODAY = "today", "From today's work"
        PAGE = "page", "From the battery list or page"
        API = "api", "Sent by another program"
        IMPORT = "import", "CSV import"
        UNKNOWN = "unknown", "Not recorded"

    # What a tablet screen may claim (it arrives as `via` with the entry screen's address).
    CHOSEN_ON_TABLET = (ChosenVia.SCAN, ChosenVia.SEARCH, ChosenVia.TODAY, ChosenVia.PAGE)

    POST_CHARGE = (Situation.JUST_CHARGED, Situation.JUST_EQUALIZED)
    SHOWS_STATE_OF_CHARGE = (Situation.JUST_CHARGED, Situation.JUST_EQUALIZED, Situation.RESTED)

    # No index of its own: the index on (battery, taken_at) below serves every look-up by battery.
    battery = models.ForeignKey(Battery, on_delete=models.PROTECT, related_name="inspections", db_index=False)
    taken_at = models.DateTimeField(db_index=True)
    taken_by = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.PROTECT, related_name="inspections")
    situation = models.CharField(max_length=16, choices=Situation.choices)
    scope = models.CharField(max_length=8, choices=Scope.choices, default=Scope.ALL_CELLS)
    temp_c = models.DecimalField("electrolyte temperature (°C)", max_digits=4, decimal_places=1, null=True, blank=True)
    hydrometer_compensated = models.BooleanField(
        default=False, help_text="The hydrometer corrects for temperature itself: no correction is applied."
    )
    hours_since_charge = models.DecimalField(max_digits=6, decimal_places=1, null=True, blank=True)
    notes = models.TextField(blank=True)
    client_uuid = models.UUIDField(default=uuid.uuid4, unique=True, help_text="Set by the tablet; a resend stores nothing new.")
    chosen_via = models.CharField(
        "battery chosen by", max_length=8, choices=ChosenVia.choices, default=ChosenVia.UNKNOWN,
        help_text="How the battery was picked before the reading: a scanned label, a search, today's work, ...",
    )
    client_digest = models.CharField(
        max_length=64, blank=True, default="",
        help_text="SHA-256 of the API submission that stored it: the same client UUID with another body is refused.",
    )

    # Summary computed by fleetcare.chemistry when the inspection is saved.
    sg_mean = models.DecimalField(max_digits=5, decimal_places=3, null=True, blank=True)
    sg_min = models.DecimalField(max_digits=5, decimal_places=3, null=True, blank=True)
    sg_max = models.DecimalField(max_digits=5, decimal_places=3, null=True, blank=True)
    sg_spread = models.DecimalField(max_digits=5, decimal_places=3, null=True, blank=True)
    sg_behind_median = models.DecimalField(
        max_digits=5, decimal_places=4, null=True, blank=True,
        help_text="All-cell readings: the furthest any cell reads below the median of the other cells (the spread "
                  "rule's measure).")
    lowest_position = models.PositiveSmallIntegerField(null=True, blank=True)
    volts_total = models.DecimalField(max_digits=6, decimal_places=2, null=True, blank=True)
    soc_percent = models.DecimalField("state of charge (%)", max_digits=5, decimal_places=1, null=True, blank=True)
    soc_basis = models.CharField(max_length=8, blank=True, help_text="sg or ocv: which reading the state of charge came from.")

    # Revisions and soft delete.
    is_current = models.BooleanField(default=True)
    supersedes = models.OneToOneField("self", on_delete=models.PROTECT, null=True, blank=True, related_name="superseded_by")
    revision_reason = models.CharField(max_length=200, blank=True)
    recorded_at = models.DateTimeField(auto_now_add=True)
    deleted_at = models.DateTimeField(null=True, blank=True)
    deleted_by = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.PROTECT, null=True, blank=True, related_name="+")

    objects = InspectionQuerySet.as_manager()

    class Meta:
        ordering = ["-taken_at"]
        indexes = [
            models.Index(fields=["battery", "-taken_at"], name="inspection_battery_time"),
            # Each battery's readings after charge, newest first (overview, findings, budget): the latest
            # of them, or their count, without reading the battery's whole history. The budget's trend points
            # (a year of them for every battery) are read from the index alone on PostgreSQL.
            models.Index(
                fields=["battery", "-taken_at"],
                condition=models.Q(is_current=True, deleted_at__isnull=True, situation__in=["charged", "equalized"]),
                include=["scope", "sg_mean", "sg_spread", "lowest_position", "sg_min"],
                name="inspection_post_charge_time",
            ),
            # Readings low enough to count as deep discharge, in any situation (the default limit is 20 %; a
            # site may raise it up to 30 % and still be served from here), read from the index alone on PostgreSQL.
            models.Index(
                fields=["battery", "taken_at"],
                include=["soc_percent"],
                condition=models.Q(
                    is_current=True, deleted_at__isnull=True, soc_percent__lt=30,
                ),
                name="inspection_low_charge_time",
            ),
            # Readings hot enough to matter to the hot-battery finding (its default limit is 55 °C; a limit down
            # to HOT_INDEX_FLOOR_C is served from here, a lower one from the readings themselves).
            models.Index(
                fields=["battery", "taken_at"],
                include=["temp_c"],
                condition=models.Q(is_current=True, deleted_at__isnull=True, temp_c__gt=HOT_INDEX_FLOOR_C),
                name="inspection_hot_time",
            ),
            # The current readings of a stretch of days, with how their battery was picked (the overview's
            # count by site), read from the index alone on PostgreSQL.
            models.Index(
                fields=["taken_at"],
                include=["battery", "chosen_via"],
                condition=models.Q(is_current=True, deleted_at__isnull=True),
                name="inspection_current_time",
            ),
        ]

    def __str__(self):
        return f"{self.battery} {self.taken_at:%Y-%m-%d %H:%M} {self.get_situation_display()}"

    @property
    def is_post_charge(self):
        return self.situation in self.POST_CHARGE

    @classmethod
    def chosen_on_tablet(cls, value):
        """The tablet's `via` value if it is one a tablet may claim, else "not recorded"."""
        return value if value in cls.CHOSEN_ON_TABLET else cls.ChosenVia.UNKNOWN


class CellReading(models.Model):
    """One box of the tray grid: a cell (flooded) or a monoblock (sealed, voltage only)."""

    class Level(models.TextChoices):
        OK = "ok", "OK"
        LOW = "low", "Low"

    # No index of its own: the unique (inspection, position) constraint's index serves every look-up by inspection.
    inspection = models.ForeignKey(Inspection, on_delete=models.CASCADE, related_name="cells", db_index=False)
    position = models.PositiveSmallIntegerField(help_text="Cell number, or block number for sealed blocks.")
    sg = models.DecimalField("observed SG", max_digits=5, decimal_places=3, null=True, blank=True)
    sg_corrected = models.DecimalField("corrected SG", max_digits=5, decimal_places=3, null=True, blank=True)
    temp_c = models.DecimalField(max_digits=4, decimal_places=1, null=True, blank=True)
    volts = models.DecimalField(max_digits=6, decimal_places=3, null=True, blank=True)
    level = models.CharField(max_length=3, choices=Level.choices, blank=True)

    class Meta:
        ordering = ["inspection", "position"]
        constraints = [models.UniqueConstraint(fields=["inspection", "position"], name="one_reading_per_position")]
        indexes = [
            models.Index(fields=["inspection"], condition=models.Q(level="low"), name="cell_low_level"),
            models.Index(fields=["inspection"], include=["temp_c", "position"],
                         condition=models.Q(temp_c__gt=HOT_INDEX_FLOOR_C), name="cell_hot"),
        ]

    def __str__(self):
        return f"{self.inspection_id}#{self.position}"


class WaterTopUpQuerySet(models.QuerySet):
    def current(self):
        return self.filter(deleted_at__isnull=True)

    def visible_to(self, user):
        return self.filter(battery__in=Battery.objects.visible_to(user))


class WaterTopUp(models.Model):
    class WaterType(models.TextChoices):
        DISTILLED = "distilled", "Distilled"
        DEIONISED = "deionised", "Deionised"
        OTHER = "other", "Other (say which in the notes)"

    battery = models.ForeignKey(Battery, on_delete=models.PROTECT, related_name="top_ups")
    done_at = models.DateTimeField(db_index=True)
    done_by = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.PROTECT, related_name="top_ups")
    volume_ml = models.DecimalField("water added for the whole battery (mL)", max_digits=8, decimal_places=1)
    volume_entered = models.CharField(max_length=40, blank=True, help_text="What the crew typed, with its unit, kept as entered.")
    before_charge = models.BooleanField(default=False, help_text="Water added before charging rather than after.")
    water_type = models.CharField(max_length=10, choices=WaterType.choices, default=WaterType.DISTILLED)
    notes = models.TextField(blank=True)
    client_uuid = models.UUIDField(default=uuid.uuid4, unique=True)
    client_digest = models.CharField(max_length=64, blank=True, default="",
                                     help_text="SHA-256 of the API submission that stored it.")
    recorded_at = models.DateTimeField(auto_now_add=True)
    deleted_at = models.DateTimeField(null=True, blank=True)

    objects = WaterTopUpQuerySet.as_manager()

    class Meta:
        ordering = ["-done_at"]
        indexes = [
            # Water per battery over a span of months, read from the index alone on PostgreSQL.
            models.Index(
                fields=["battery", "done_at"], include=["volume_ml"], condition=models.Q(deleted_at__isnull=True),
                name="top_up_battery_time",
            ),
        ]

    def __str__(self):
        return f"{self.battery} {self.done_at:%Y-%m-%d} {self.volume_ml} mL"

    @property
    def volume_ml_per_cell(self):
        return self.volume_ml / self.battery.profile.cell_count


class BatteryState(models.Model):
    """What the pages need of a battery's history, kept current in the same transaction as every write that
    changes it (fleetcare.readings.state) and rebuilt from history by `manage.py rebuild_battery_state`.

    For each kind of reading it keeps the latest current one (ties go to the later stored) and its time."""

    battery = models.OneToOneField(Battery, on_delete=models.CASCADE, primary_key=True, related_name="state")
    latest_inspection = models.ForeignKey(Inspection, on_delete=models.SET_NULL, null=True, related_name="+",
                                          help_text="The latest current inspection of any kind.")
    latest_at = models.DateTimeField(null=True)
    latest_situation = models.CharField(max_length=16, blank=True)
    all_cells_inspection = models.ForeignKey(Inspection, on_delete=models.SET_NULL, null=True, related_name="+",
                                             help_text="The latest current all-cell inspection.")
    all_cells_at = models.DateTimeField(null=True)
    soc_inspection = models.ForeignKey(Inspection, on_delete=models.SET_NULL, null=True, related_name="+",
                                       help_text="The latest current reading that shows state of charge "
                                                 "(after charge, or rested).")
    soc_at = models.DateTimeField(null=True)
    soc_percent = models.DecimalField(max_digits=5, decimal_places=1, null=True)
    spread_inspection = models.ForeignKey(Inspection, on_delete=models.SET_NULL, null=True, related_name="+",
                                          help_text="The latest current all-cell inspection with a spread.")
    spread_at = models.DateTimeField(null=True)
    sg_spread = models.DecimalField(max_digits=5, decimal_places=3, null=True)
    post_charge_spread_inspection = models.ForeignKey(
        Inspection, on_delete=models.SET_NULL, null=True, related_name="+",
        help_text="The latest current all-cell inspection after charge with a spread.")
    post_charge_spread_at = models.DateTimeField(null=True)
    post_charge_sg_spread = models.DecimalField(max_digits=5, decimal_places=3, null=True)
    post_charge_sg_behind_median = models.DecimalField(
        max_digits=5, decimal_places=4, null=True,
        help_text="That inspection's furthest cell below the median of the other cells.")
    equalized_inspection = models.ForeignKey(Inspection, on_delete=models.SET_NULL, null=True, related_name="+",
                                             help_text="The latest current reading taken just after equalizing.")
    equalized_at = models.DateTimeField(null=True)
    post_charge_inspection = models.ForeignKey(Inspection, on_delete=models.SET_NULL, null=True, related_name="+",
                                               help_text="The latest current reading after a charge.")
    post_charge_at = models.DateTimeField(null=True)
    first_post_charge_at = models.DateTimeField(null=True, help_text="The earliest current reading after a charge.")
    charge_count = models.PositiveIntegerField(default=0, help_text="Current readings after a charge, ever.")
    watered_at = models.DateTimeField(null=True, help_text="The latest current water top-up.")

    def __str__(self):
        return f"state of battery {self.battery_id}"


class BatteryMonth(models.Model):
    """One battery's totals for one calendar month on its site's clock, kept with its state
    (fleetcare.readings.state) so the water chart and the budget's depth of discharge read twelve rows per
    battery instead of a year of readings. Only current top-ups and current readings count."""

    battery = models.ForeignKey(Battery, on_delete=models.CASCADE, related_name="months")
    month = models.DateField(help_text="The first day of the month, on the battery's site clock.")
    water_ml = models.DecimalField(max_digits=12, decimal_places=1, default=0,
                                   help_text="Water added in the month, whole battery (mL).")
    top_ups = models.PositiveIntegerField(default=0, help_text="Top-ups logged in the month.")
    before_charge_socs = models.PositiveIntegerField(
        default=0, help_text="Readings before charge with a state of charge, in the month.")
    before_charge_soc_total = models.DecimalField(
        max_digits=12, decimal_places=1, default=0, help_text="The sum of their states of charge (%).")

    class Meta:
        constraints = [models.UniqueConstraint(fields=["battery", "month"], name="one_row_per_battery_month")]

    def __str__(self):
        return f"battery {self.battery_id}, {self.month:%Y-%m}"


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


class CsvImport(models.Model):
    """An uploaded CSV file and what importing it did. The file is kept on disk (MEDIA_ROOT) until the
    background task has read it; the result (counts and the first notes) stays here for the import's page."""

    class State(models.TextChoices):
        WAITING = "waiting", "Waiting for the worker"
        RUNNING = "running", "Importing"
        DONE = "done", "Finished"
        FAILED = "failed", "Failed"

    id = models.UUIDField(primary_key=True, default=uuid.uuid4, editable=False)
    uploaded_by = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.PROTECT, related_name="csv_imports")
    uploaded_at = models.DateTimeField(auto_now_add=True)
    file_name = models.CharField(max_length=200)
    file = models.FileField(upload_to="imports/", blank=True)
    size_bytes = models.PositiveBigIntegerField(default=0)
    dry_run = models.BooleanField(default=False)
    good_rows_only = models.BooleanField(default=False)
    state = models.CharField(max_length=8, choices=State.choices, default=State.WAITING)
    task_id = models.CharField(max_length=64, blank=True)
    finished_at = models.DateTimeField(null=True, blank=True)
    result = models.JSONField(default=dict, blank=True)
    notes_file = models.FileField(upload_to="imports/", blank=True, help_text="Every note of the import, as CSV.")
    error = models.TextField(blank=True)

    class Meta:
        ordering = ["-uploaded_at"]

    def __str__(self):
        return f"{self.file_name} ({self.get_state_display()})"

    @property
    def finished(self):
        return self.state in (self.State.DONE, self.State.FAILED)


class EntryPolicy(policy_layers.LayeredPolicy):
    """Reading-entry limit overrides (fleetcare.readings.validation.SETTINGS)."""

    class Meta(policy_layers.LayeredPolicy.Meta):
        verbose_name = "reading entry policy"
        verbose_name_plural = "reading entry policies"
        constraints = policy_layers.scope_constraints("entry_policy")


policy_layers.add_setting_columns(EntryPolicy, ENTRY_SETTINGS, max_digits=6, decimal_places=3)

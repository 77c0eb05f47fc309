"""Sites, battery profiles, batteries, the trucks and chairs they power, and who carried what when."""
import zoneinfo
from decimal import Decimal

from django.conf import settings
from django.core.exceptions import ValidationError
from django.core.validators import MaxValueValidator, MinValueValidator
from django.db import models
from django.utils import timezone


def validate_timezone(value):
    if value not in zoneinfo.available_timezones():
        raise ValidationError(f"“{value}” is not a known time zone (for example Europe/London).")


class SiteQuerySet(models.QuerySet):
    def for_user(self, user):
        """Sites the user may see: all for administrators, otherwise the sites they belong to."""
        from fleetcare.accounts.roles import ADMINISTRATOR, has_role

        if not user.is_authenticated:
            return self.none()
        if has_role(user, ADMINISTRATOR):
            return self
        return self.filter(members=user)


class Site(models.Model):
    class Kind(models.TextChoices):
        WAREHOUSE = "warehouse", "Warehouse"
        CARE_HOME = "care_home", "Care residence"
        OTHER = "other", "Other"

    class TempUnit(models.TextChoices):
        CELSIUS = "C", "°C"
        FAHRENHEIT = "F", "°F"

    class VolumeUnit(models.TextChoices):
        LITRE = "L", "litres"
        US_FL_OZ = "floz", "US fl oz"

    name = models.CharField(max_length=120, unique=True)
    code = models.SlugField(max_length=30, unique=True, help_text="Short name used in exports and commands.")
    kind = models.CharField(max_length=20, choices=Kind.choices, default=Kind.WAREHOUSE)
    timezone = models.CharField(max_length=64, default="UTC", validators=[validate_timezone])
    temp_unit = models.CharField("temperature unit", max_length=1, choices=TempUnit.choices, default=TempUnit.CELSIUS)
    volume_unit = models.CharField(max_length=4, choices=VolumeUnit.choices, default=VolumeUnit.LITRE)
    charges_per_day = models.DecimalField(
        max_digits=4, decimal_places=2, default=Decimal("1.00"),
        validators=[MinValueValidator(Decimal("0")), MaxValueValidator(Decimal("6"))],
        help_text="Charges a battery in service gets per day, used where no charges are logged.",
    )
    spares_reserve = models.PositiveSmallIntegerField(
        default=0, help_text="Spare batteries that must stay ready at every shift change."
    )
    members = models.ManyToManyField(settings.AUTH_USER_MODEL, blank=True, related_name="sites")

    objects = SiteQuerySet.as_manager()

    class Meta:
        ordering = ["name"]

    def __str__(self):
        return self.name

    @property
    def tzinfo(self):
        """The site's zone; see fleetcare.fleet.site_time.zone_of, which every page, form and export asks."""
        from fleetcare.fleet.site_time import zone_of

        return zone_of(self)


class ShiftWindow(models.Model):
    """A daily window when batteries can be off their trucks (for charging, equalizing or watering)."""

    site = models.ForeignKey(Site, on_delete=models.CASCADE, related_name="shift_windows")
    name = models.CharField(max_length=60)
    starts_at = models.TimeField()
    hours = models.DecimalField(max_digits=4, decimal_places=1, validators=[MinValueValidator(Decimal("0.5")), MaxValueValidator(Decimal("24"))])

    class Meta:
        ordering = ["site", "starts_at"]

    def __str__(self):
        return f"{self.site.code} {self.name} {self.starts_at:%H:%M} +{self.hours} h"


class ChargingRoom(models.Model):
    site = models.ForeignKey(Site, on_delete=models.CASCADE, related_name="charging_rooms")
    name = models.CharField(max_length=80)
    chargers = models.PositiveSmallIntegerField(default=1)
    equalizing_chargers = models.PositiveSmallIntegerField(
        default=1, help_text="How many of the chargers can run an equalizing charge."
    )
    airflow_m3h = models.DecimalField(
        "ventilation airflow (m³/h)", max_digits=8, decimal_places=1, default=Decimal("0"),
        validators=[MinValueValidator(Decimal("0"))],
        help_text="Airflow the room's ventilation provides, from the site's ventilation survey.",
    )

    class Meta:
        ordering = ["site", "name"]
        constraints = [models.UniqueConstraint(fields=["site", "name"], name="unique_room_per_site")]

    def __str__(self):
        return f"{self.site.code} · {self.name}"

    def clean(self):
        if self.equalizing_chargers is not None and self.chargers is not None and self.equalizing_chargers > self.chargers:
            raise ValidationError({"equalizing_chargers": "Cannot exceed the number of chargers."})


class BatteryProfile(models.Model):
    """What a battery model is: the maker's figures every reading is judged against."""

    class Technology(models.TextChoices):
        FLOODED = "flooded", "Flooded (vented)"
        AGM = "agm", "AGM (sealed)"
        GEL = "gel", "Gel (sealed)"

    class Application(models.TextChoices):
        TRACTION = "traction", "Traction (trucks)"
        MOBILITY = "mobility", "Mobility (wheelchairs, scooters)"

    name = models.CharField(max_length=120, unique=True)
    maker = models.CharField(max_length=120, blank=True)
    technology = models.CharField(max_length=10, choices=Technology.choices, default=Technology.FLOODED)
    application = models.CharField(max_length=10, choices=Application.choices, default=Application.TRACTION)
    nominal_voltage = models.DecimalField(max_digits=5, decimal_places=1)
    monoblocks = models.PositiveSmallIntegerField(
        default=1, validators=[MinValueValidator(1), MaxValueValidator(40)],
        help_text="Blocks in series: 1 for a traction tray of single cells, 2 for a wheelchair pair of 12 V blocks.",
    )
    cells_per_block = models.PositiveSmallIntegerField(
        validators=[MinValueValidator(1), MaxValueValidator(80)],
        help_text="Cells in each block: the whole tray (12–40) for traction, 6 for a 12 V monoblock.",
    )
    capacity_ah = models.DecimalField("rated capacity (Ah)", max_digits=7, decimal_places=1, validators=[MinValueValidator(Decimal("1"))])
    capacity_hour_rate = models.PositiveSmallIntegerField("capacity hour rate", default=5, help_text="Hours, e.g. 5 for C5.")
    full_charge_sg = models.DecimalField("full-charge SG", max_digits=5, decimal_places=3, null=True, blank=True)
    discharged_sg = models.DecimalField("discharged SG", max_digits=5, decimal_places=3, null=True, blank=True)
    sg_reference_temp_c = models.DecimalField(
        "SG reference temperature (°C)", max_digits=4, decimal_places=1, default=Decimal("25.0"),
        help_text="The temperature the nameplate's SG figures are stated at: often 30 °C on European traction "
                  "trays, 25 °C or 26.7 °C (80 °F) in US practice. Readings are corrected to it.",
    )
    sg_coefficient_per_c = models.DecimalField("SG correction per °C", max_digits=6, decimal_places=5, default=Decimal("0.00070"))
    ocv_rest_hours = models.DecimalField(
        "rest before an OCV reading counts (h)", max_digits=4, decimal_places=1, default=Decimal("4.0"),
        help_text="Hours off charge and load before open-circuit voltage gives state of charge (common practice: several hours, ideally 24).",
    )
    peukert_exponent = models.DecimalField(
        "Peukert exponent", max_digits=4, decimal_places=2, default=Decimal("1.25"),
        validators=[MinValueValidator(Decimal("1.00")), MaxValueValidator(Decimal("2.00"))],
        help_text="How capacity falls at higher currents; about 1.1–1.3 for lead-acid (common practice). The maker's figure rules.",
    )
    capacity_end_volts_per_cell = models.DecimalField(
        "capacity test end voltage (V per cell)", max_digits=4, decimal_places=2, default=Decimal("1.70"),
        help_text="Commonly 1.70 V per cell at the 5-hour rate (field notes); the maker's figure rules.",
    )
    capacity_correction = models.CharField(
        "capacity temperature correction", max_length=12, default="iec_60254_1",
        choices=[("iec_60254_1", "IEC 60254-1 (traction): to the reference temperature, 0.006 per °C"),
                 ("ieee_450", "IEEE Std 450 table (stationary-style cells): to 25 °C")],
    )
    capacity_reference_temp_c = models.DecimalField(
        "capacity reference temperature (°C)", max_digits=4, decimal_places=1, default=Decimal("30.0"),
        help_text="IEC 60254-1 states traction capacity at 30 °C (from memory). The IEEE table always uses 25 °C.",
    )
    watering_allowed = models.BooleanField(default=True)
    equalizing_allowed = models.BooleanField(default=True)
    design_life_years = models.DecimalField(max_digits=4, decimal_places=1, default=Decimal("5.0"))
    design_cycles = models.PositiveIntegerField(default=1500)
    unit_price = models.DecimalField(max_digits=10, decimal_places=2, default=Decimal("0"))
    weight_kg = models.DecimalField(max_digits=7, decimal_places=1, default=Decimal("0"))

    class Meta:
        ordering = ["name"]

    def __str__(self):
        return self.name

    @property
    def cell_count(self):
        return self.monoblocks * self.cells_per_block

    @property
    def is_flooded(self):
        return self.technology == self.Technology.FLOODED

    @property
    def reads_by_block(self):
        """Sealed monoblocks are read as block voltages; flooded cells one by one."""
        return not self.is_flooded

    @property
    def positions(self):
        """How many entry boxes an all-cell inspection has."""
        return self.monoblocks if self.reads_by_block else self.cell_count

    def clean(self):
        errors = {}
        if self.is_flooded:
            if self.full_charge_sg is None:
                errors["full_charge_sg"] = "A flooded battery needs its full-charge SG (from the nameplate)."
            if self.discharged_sg is None:
                errors["discharged_sg"] = "A flooded battery needs its discharged SG."
        if self.full_charge_sg is not None and not Decimal("1.150") <= self.full_charge_sg <= Decimal("1.350"):
            errors["full_charge_sg"] = "Full-charge SG is usually 1.265–1.320; 1.150–1.350 accepted."
        if self.discharged_sg is not None and not Decimal("1.000") <= self.discharged_sg <= Decimal("1.250"):
            errors["discharged_sg"] = "Discharged SG is usually 1.100–1.150; 1.000–1.250 accepted."
        if (
            self.full_charge_sg is not None and self.discharged_sg is not None
            and self.discharged_sg >= self.full_charge_sg
        ):
            errors["discharged_sg"] = "Discharged SG must be below the full-charge SG."
        if not self.is_flooded and self.watering_allowed:
            errors["watering_allowed"] = "Sealed (AGM or gel) batteries cannot be watered."
        if errors:
            raise ValidationError(errors)


class BatteryQuerySet(models.QuerySet):
    def visible_to(self, user):
        return self.filter(site__in=Site.objects.for_user(user))

    def active(self):
        return self.exclude(status=Battery.Status.RETIRED)


class Battery(models.Model):
    class Status(models.TextChoices):
        IN_SERVICE = "in_service", "In service"
        CHARGING = "charging", "Charging"
        SPARE = "spare", "Spare"
        REPAIR = "repair", "Out for repair"
        RETIRED = "retired", "Retired"

    serial = models.CharField("serial number", max_length=60, unique=True)
    profile = models.ForeignKey(BatteryProfile, on_delete=models.PROTECT, related_name="batteries")
    site = models.ForeignKey(Site, on_delete=models.PROTECT, related_name="batteries")
    charging_room = models.ForeignKey(ChargingRoom, on_delete=models.SET_NULL, null=True, blank=True, related_name="batteries")
    in_service_date = models.DateField()
    status = models.CharField(max_length=12, choices=Status.choices, default=Status.IN_SERVICE)
    pilot_cell = models.PositiveSmallIntegerField(default=1, help_text="The cell read between all-cell inspections.")
    notes = models.TextField(blank=True)

    objects = BatteryQuerySet.as_manager()

    class Meta:
        ordering = ["serial"]
        verbose_name_plural = "batteries"

    def __str__(self):
        return self.serial

    def clean(self):
        if self.profile_id and self.pilot_cell and self.pilot_cell > self.profile.cell_count:
            raise ValidationError({"pilot_cell": f"This profile has {self.profile.cell_count} cells."})
        if self.charging_room_id and self.site_id and self.charging_room.site_id != self.site_id:
            raise ValidationError({"charging_room": "The charging room must be at the battery's site."})

    @property
    def cell_count(self):
        return self.profile.cell_count

    def current_fitting(self):
        return self.fittings.filter(removed_at__isnull=True).select_related("vehicle").first()


class Vehicle(models.Model):
    """A truck or chair, known by the asset number painted on it."""

    class Kind(models.TextChoices):
        COUNTERBALANCE = "forklift", "Forklift"
        REACH = "reach", "Reach truck"
        PALLET = "pallet", "Pallet truck"
        WHEELCHAIR = "wheelchair", "Powered wheelchair"
        SCOOTER = "scooter", "Mobility scooter"

    asset_number = models.CharField(max_length=40, unique=True)
    kind = models.CharField(max_length=12, choices=Kind.choices)
    site = models.ForeignKey(Site, on_delete=models.PROTECT, related_name="vehicles")
    description = models.CharField(max_length=120, blank=True)
    active = models.BooleanField(default=True)

    class Meta:
        ordering = ["asset_number"]

    def __str__(self):
        return f"{self.asset_number} ({self.get_kind_display()})"


class Fitting(models.Model):
    """A battery fitted to a vehicle from one moment until it was taken out (open while fitted)."""

    battery = models.ForeignKey(Battery, on_delete=models.CASCADE, related_name="fittings")
    vehicle = models.ForeignKey(Vehicle, on_delete=models.PROTECT, related_name="fittings")
    fitted_at = models.DateTimeField(default=timezone.now)
    removed_at = models.DateTimeField(null=True, blank=True)
    shift = models.CharField(max_length=40, blank=True, help_text="Shift the battery works, if the site rotates batteries.")

    class Meta:
        ordering = ["-fitted_at"]
        constraints = [
            models.UniqueConstraint(
                fields=["battery"], condition=models.Q(removed_at__isnull=True), name="one_open_fitting_per_battery"
            ),
            models.CheckConstraint(
                condition=models.Q(removed_at__isnull=True) | models.Q(removed_at__gte=models.F("fitted_at")),
                name="fitting_removed_after_fitted",
            ),
        ]

    def __str__(self):
        return f"{self.battery} in {self.vehicle.asset_number} from {self.fitted_at:%Y-%m-%d}"

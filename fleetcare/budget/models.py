"""Capacity tests and the assumptions a replacement budget is built on."""
from decimal import Decimal

from django.conf import settings
from django.core.validators import MaxValueValidator, MinValueValidator
from django.db import models
from django.db.models import Q

from fleetcare import policy_layers
from fleetcare.budget import forecast
from fleetcare.budget.policy import SETTINGS
from fleetcare.fleet.models import Battery, BatteryProfile, Site

ZERO = Decimal("0")


class CapacityTestQuerySet(models.QuerySet):
    def corrected(self):
        """Tests worked out from their discharge record and corrected for temperature (the budget uses only these)."""
        return self.filter(corrected=True)


class CapacityTest(models.Model):
    """A discharge test: what was measured, and the capacity it shows as a percentage of the rating,
    corrected to the profile's reference temperature (and through Peukert's law for a test at another rate).

    Records from before tests were recorded in full carry only the percentage typed: `corrected` is False,
    they are shown as uncorrected and the budget does not use them."""

    class Rate(models.TextChoices):
        RATED = "rated", "At the rated rate"
        CURRENT = "current", "At another current"

    battery = models.ForeignKey(Battery, on_delete=models.CASCADE, related_name="capacity_tests")
    tested_on = models.DateField()
    percent_of_rated = models.DecimalField(
        "capacity (% of rated)", max_digits=5, decimal_places=1,
        validators=[MinValueValidator(Decimal("1")), MaxValueValidator(Decimal("150"))],
    )
    corrected = models.BooleanField(default=False, help_text="Worked out from the test record and corrected for temperature.")
    rate = models.CharField(max_length=8, choices=Rate.choices, blank=True)
    current_a = models.DecimalField("discharge current (A)", max_digits=7, decimal_places=1, null=True, blank=True)
    hours_to_end = models.DecimalField("time to the end voltage (h)", max_digits=6, decimal_places=2, null=True, blank=True)
    delivered_ah = models.DecimalField("Ah delivered", max_digits=8, decimal_places=1, null=True, blank=True)
    end_volts_per_cell = models.DecimalField("end voltage (V per cell)", max_digits=4, decimal_places=2, null=True, blank=True)
    start_temp_c = models.DecimalField("electrolyte temperature at the start (°C)", max_digits=4, decimal_places=1,
                                       null=True, blank=True)
    cell_volts = models.JSONField(default=dict, blank=True, help_text="Each cell's voltage near the end: {position: volts}.")
    corrected_ah = models.DecimalField("capacity at the reference temperature (Ah)", max_digits=8, decimal_places=1,
                                       null=True, blank=True)
    reference_temp_c = models.DecimalField(max_digits=4, decimal_places=1, null=True, blank=True)
    method = models.CharField(max_length=12, blank=True)
    peukert_exponent = models.DecimalField(max_digits=4, decimal_places=2, null=True, blank=True)
    first_cells = models.JSONField(default=list, blank=True, help_text="Cells that reached the end voltage first.")
    notes = models.TextField(blank=True)
    tested_by = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.PROTECT, null=True, blank=True,
                                  related_name="+")
    recorded_at = models.DateTimeField(auto_now_add=True)

    objects = CapacityTestQuerySet.as_manager()

    class Meta:
        ordering = ["-tested_on", "-pk"]

    def __str__(self):
        return f"{self.battery} {self.tested_on:%Y-%m-%d} {self.percent_of_rated} %{'' if self.corrected else ' (uncorrected)'}"

    @property
    def method_label(self):
        return {"iec_60254_1": "IEC 60254-1", "ieee_450": "IEEE Std 450 table"}.get(self.method, "")


def _money(label, help_text, default=ZERO):
    return models.DecimalField(label, max_digits=10, decimal_places=2, default=default,
                               validators=[MinValueValidator(ZERO)], help_text=help_text)


class BudgetAssumptions(models.Model):
    """One row for the whole organisation: prices and the fiscal calendar (the forecast's thresholds are
    layered settings: fleetcare.budget.policy).

    Shown on the budget page and written into every export, so a figure can always be traced back.
    """

    currency = models.CharField(max_length=8, blank=True, default="", help_text="Shown beside amounts, e.g. GBP.")
    installation_cost = _money("installation per battery", "Fitting, commissioning and transport of one battery.")
    scrap_credit_per_kg = models.DecimalField(
        "scrap-lead credit per kg", max_digits=8, decimal_places=3, default=ZERO, validators=[MinValueValidator(ZERO)],
        help_text="What a licensed lead recycler pays per kg of spent battery (the profile holds the weight).",
    )
    escalation_percent = models.DecimalField(
        "yearly price escalation (%)", max_digits=5, decimal_places=2, default=ZERO,
        validators=[MinValueValidator(Decimal("-50")), MaxValueValidator(Decimal("100"))],
        help_text="Battery and cell prices grow by this each year, compounded from today.",
    )
    fiscal_year_start_month = models.PositiveSmallIntegerField(
        default=1, validators=[MinValueValidator(1), MaxValueValidator(12)],
        help_text="1 = January. A fiscal year is labelled by the calendar year it ends in "
                  "(April start: FY2027 ends March 2027).",
    )
    cell_cost = _money("replacement cost per cell", "One traction cell fitted into a tray, labour included.")
    include_renewals = models.BooleanField(
        "budget the replacements' own replacement", default=True,
        help_text="A battery replaced early in the horizon is replaced again when its own design life runs out.",
    )

    updated_at = models.DateTimeField(auto_now=True)
    updated_by = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.SET_NULL, null=True, blank=True,
                                   related_name="+")

    class Meta:
        verbose_name = "budget assumptions"
        verbose_name_plural = "budget assumptions"

    def __str__(self):
        return "Budget assumptions"

    @classmethod
    def current(cls):
        return cls.objects.get_or_create(pk=1)[0]

    def money(self):
        return forecast.Money(
            installation=self.installation_cost, scrap_credit_per_kg=self.scrap_credit_per_kg,
            escalation_percent=self.escalation_percent, cell_cost=self.cell_cost,
            fiscal_year_start_month=self.fiscal_year_start_month, include_renewals=self.include_renewals,
        )


class ProfileBudget(models.Model):
    """Budget settings for one battery profile: its price and installation, and how deep it is usually cycled."""

    profile = models.OneToOneField(BatteryProfile, on_delete=models.CASCADE, related_name="budget_settings")
    unit_price = models.DecimalField(
        "budget unit price", max_digits=10, decimal_places=2, null=True, blank=True,
        validators=[MinValueValidator(ZERO)],
        help_text="Blank uses the profile's own unit price.",
    )
    installation_cost = models.DecimalField(
        "installation per battery", max_digits=10, decimal_places=2, null=True, blank=True,
        validators=[MinValueValidator(ZERO)], help_text="Blank uses the installation cost in the budget assumptions.",
    )
    typical_depth_percent = models.DecimalField(
        "typical depth of discharge per charge (%)", max_digits=4, decimal_places=1, null=True, blank=True,
        validators=[MinValueValidator(Decimal("1")), MaxValueValidator(Decimal("100"))],
        help_text="Used where no state of charge is logged before charging. Blank counts every charge as a full "
                  "design cycle (80 % depth, the depth design cycles are quoted at).",
    )

    class Meta:
        verbose_name = "profile budget settings"
        verbose_name_plural = "profile budget settings"

    def __str__(self):
        return f"{self.profile}"


class Policy(policy_layers.LayeredPolicy):
    """Forecast overrides (fleetcare.budget.policy.SETTINGS)."""

    class Meta(policy_layers.LayeredPolicy.Meta):
        verbose_name = "budget policy"
        verbose_name_plural = "budget policies"
        constraints = policy_layers.scope_constraints("budget_policy")


policy_layers.add_setting_columns(Policy, SETTINGS, max_digits=8, decimal_places=3)

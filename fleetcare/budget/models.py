"""Capacity tests and the assumptions a replacement budget is built on."""
from decimal import Decimal

from django.conf import settings
from django.core.validators import MaxValueValidator, MinValueValidator
from django.db import models

from fleetcare.budget import forecast
from fleetcare.fleet.models import Battery, BatteryProfile

ZERO = Decimal("0")


class CapacityTest(models.Model):
    """A discharge test: the capacity the battery delivered, as a percentage of its rating."""

    battery = models.ForeignKey(Battery, on_delete=models.CASCADE, related_name="capacity_tests")
    tested_on = models.DateField()
    percent_of_rated = models.DecimalField(
        "capacity (% of rated)", max_digits=5, decimal_places=1,
        validators=[MinValueValidator(Decimal("1")), MaxValueValidator(Decimal("150"))],
    )
    notes = models.TextField(blank=True)
    tested_by = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.PROTECT, null=True, blank=True,
                                  related_name="+")
    recorded_at = models.DateTimeField(auto_now_add=True)

    class Meta:
        ordering = ["-tested_on", "-pk"]

    def __str__(self):
        return f"{self.battery} {self.tested_on:%Y-%m-%d} {self.percent_of_rated} %"


def _money(label, help_text, default=ZERO):
    return models.DecimalField(label, max_digits=10, decimal_places=2, default=default,
                               validators=[MinValueValidator(ZERO)], help_text=help_text)


class BudgetAssumptions(models.Model):
    """One row for the whole organisation: prices, the fiscal calendar and the forecast rules.

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

    capacity_floor_percent = models.DecimalField(
        "replace under this capacity (%)", max_digits=4, decimal_places=1, default=Decimal("80.0"),
        validators=[MinValueValidator(Decimal("1")), MaxValueValidator(Decimal("100"))],
        help_text="Default 80 %: IEEE Std 450 practice for vented cells (from memory).",
    )
    sg_drop_allowed = models.DecimalField(
        "average SG after charge may fall below full charge by", max_digits=4, decimal_places=3,
        default=Decimal("0.030"),
        validators=[MinValueValidator(Decimal("0.005"))],
        help_text="Default 0.030: the low end of the field notes' failing-cell band (common practice).",
    )
    spread_limit = models.DecimalField(
        "replace when the spread after charge reaches", max_digits=4, decimal_places=3, default=Decimal("0.050"),
        validators=[MinValueValidator(Decimal("0.010"))],
        help_text="Default 0.050: the top of the 0.030–0.050 failing-cell band (common practice).",
    )
    failing_cell_drop = models.DecimalField(
        "a cell fails when below the average after charge by", max_digits=4, decimal_places=3, default=Decimal("0.030"),
        validators=[MinValueValidator(Decimal("0.005"))],
        help_text="Default 0.030: a cell 0.030–0.050 below the average after equalizing is failing (common practice).",
    )
    failing_cell_readings = models.PositiveSmallIntegerField(
        "on this many post-charge readings in a row", default=3, validators=[MinValueValidator(1)],
        help_text="Default 3: FleetCare's choice, so one poor charge does not condemn a cell.",
    )
    max_cells_for_cell_option = models.PositiveSmallIntegerField(
        "offer cell replacement for up to this many cells", default=2,
        help_text="Default 2: a tray with more failing cells is budgeted as a whole battery (FleetCare's choice).",
    )
    life_margin_percent = models.DecimalField(
        "range either side of a design-life date (% of life)", max_digits=4, decimal_places=1, default=Decimal("15.0"),
        validators=[MinValueValidator(ZERO), MaxValueValidator(Decimal("100"))],
        help_text="Default 15 %: FleetCare's planning margin, not a published figure.",
    )
    trend_window_days = models.PositiveSmallIntegerField(
        "SG trends use readings from the last (days)", default=365, validators=[MinValueValidator(30)],
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

    def rules(self):
        return forecast.Rules(
            capacity_floor_percent=float(self.capacity_floor_percent), sg_drop_allowed=float(self.sg_drop_allowed),
            spread_limit=float(self.spread_limit), failing_cell_drop=float(self.failing_cell_drop),
            failing_cell_readings=self.failing_cell_readings, max_cells_for_cell_option=self.max_cells_for_cell_option,
            life_margin_percent=float(self.life_margin_percent), trend_window_days=self.trend_window_days,
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

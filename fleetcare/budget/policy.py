"""What the replacement forecast decides by: its own settings, and the findings' thresholds it shares.

The budget's settings are layered like every other setting (profile < site < site and profile, see
fleetcare.policy_layers). Where the forecast and the findings judge the same thing they use the same
threshold: the capacity floor and how far the mean SG may fall short of full charge come from the
findings' thresholds, and a cell is failing for the budget only when a finding says so.
"""
from decimal import Decimal

from fleetcare import policy_layers
from fleetcare.budget import forecast
from fleetcare.care import policy as care_policy

Setting = policy_layers.Setting

SETTINGS = (
    Setting("spread_limit_sg", "replacement due: spread after charge at or over", Decimal("0.050"), "SG",
            "the top of the field notes' 0.030–0.050 failing-cell band (common practice)"),
    Setting("max_cells_for_cell_option", "offer cell replacement for up to", Decimal("2"), "cells",
            "FleetCare default: a tray with more failing cells is budgeted as a whole battery", integer=True),
    Setting("life_margin_percent", "range either side of a design-life date", Decimal("15"), "% of life",
            "FleetCare's planning margin, not a published figure"),
    Setting("trend_window_days", "SG trends use readings from the last", Decimal("365"), "days",
            "FleetCare default: a year of readings", integer=True),
)
BY_NAME = {s.name: s for s in SETTINGS}


class Resolved(policy_layers.Resolved):
    """The budget's settings for one battery."""


def defaults():
    return Resolved(policy_layers.resolve_values(SETTINGS, None, None, ()))


def resolve(site_id, profile_id, policies):
    return Resolved(policy_layers.resolve_values(SETTINGS, site_id, profile_id, policies))


def rules(budget_settings, thresholds):
    """forecast.Rules from the budget's settings and the findings' thresholds for one battery."""
    return forecast.Rules(
        capacity_floor_percent=float(thresholds.capacity_floor_percent),
        sg_drop_allowed=float(thresholds.sulfation_below_full_sg),
        spread_limit=float(budget_settings.spread_limit_sg),
        max_cells_for_cell_option=int(budget_settings.max_cells_for_cell_option),
        life_margin_percent=float(budget_settings.life_margin_percent),
        trend_window_days=int(budget_settings.trend_window_days),
    )


def default_rules():
    return rules(defaults(), care_policy.defaults())

"""The thresholds findings are judged by: built-in defaults with their sources, and how overrides apply.

Every threshold is data. A `Policy` row for a battery profile overrides the default; a row for a
site overrides the profile's; a row for that site and profile overrides both. Blank fields inherit.
"""
from decimal import Decimal

from fleetcare import policy_layers

Threshold = policy_layers.Setting

COMMON = "common practice (field notes)"

THRESHOLDS = (
    Threshold("weak_cell_below_mean_sg", "weak cell: below the other cells' mean after a charge", Decimal("0.030"),
              "SG", COMMON),
    Threshold("failing_cell_after_equalize_sg", "failing cell: below the other cells' mean after equalizing",
              Decimal("0.050"), "SG", COMMON),
    Threshold("unserviceable_cell_gap_sg", "unserviceable: any two cells apart on a fully charged battery",
              Decimal("0.025"), "SG", "US Army TM 9-6140-200-14 (from memory of its text)"),
    Threshold("equalize_spread_sg", "equalizing needed: a cell below the other cells' median after charge by more than",
              Decimal("0.020"), "SG",
              "common practice (field notes): a post-charge spread over about 0.020 calls for equalizing; FleetCare "
              "measures it from the median of the other cells, so 40 healthy cells do not exceed it by chance"),
    Threshold("sg_resolution", "hydrometer: resolution and reading error", Decimal("0.005"), "SG",
              "common practice (field notes, \"Measuring well\"): float hydrometers are graduated every 0.005 and a "
              "careful reading is good to about ±0.005; digital hydrometers and refractometers 0.001"),
    Threshold("spread_readings_in_a_row", "spread: post-charge readings in a row with the same cell over the limit",
              Decimal("2"), "readings",
              "FleetCare default: one reading is not evidence; a cell over the limit plus one resolution counts at "
              "once", integer=True),
    Threshold("cell_gap_rule_max_cells", "any-two-cells rule: batteries of at most this many cells (0 = off)",
              Decimal("6"), "cells",
              "FleetCare default: the 0.025 rule comes from a manual on charged vehicle batteries of a few cells "
              "(US Army TM 9-6140-200-14, from memory); on larger trays the below-the-mean rule applies",
              integer=True),
    Threshold("sulfation_below_full_sg", "sulfation: mean below the full-charge SG by more than", Decimal("0.030"),
              "SG", "FleetCare default from the field notes' failing-cell band (common practice)"),
    Threshold("sulfation_inspections", "sulfation: consecutive post-charge inspections short", Decimal("2"),
              "inspections", "FleetCare default: two in a row, so one poor charge is not a finding", integer=True),
    Threshold("partial_charge_soc_percent", "sulfation: standing below this state of charge", Decimal("50"), "%",
              COMMON),
    Threshold("partial_charge_days", "sulfation: days standing below that state of charge", Decimal("3"), "days",
              "FleetCare default: three days, so a weekend is not a finding; set from the maker's advice", integer=True),
    Threshold("storage_charge_days", "storage: longest a spare may go without a charge", Decimal("30"), "days",
              "US Army TM 5-1185 series: stored wet batteries need a charge every 30 days (from memory)", integer=True),
    Threshold("deep_discharge_soc_percent", "deep discharge: state of charge under", Decimal("20"), "%",
              "common practice: no more than 80 % depth of discharge (field notes)"),
    Threshold("left_discharged_soc_percent", "left discharged: found at rest under this state of charge",
              Decimal("50"), "%", "common practice (field notes, \"Measuring well\"): a battery or chair pair at rest under "
              "about 50 % (about 12.2 V per 12 V block) must be charged at once"),
    Threshold("event_window_days", "deep discharge and early watering: events count for", Decimal("30"), "days",
              "FleetCare default: a month of events, so one slip does not stay on the list", integer=True),
    Threshold("water_use_window_days", "water use: window it is measured over", Decimal("30"), "days",
              "FleetCare default: water use is judged per cell per month", integer=True),
    Threshold("max_overcharge_percent", "water use: most overcharge per charge, % of rated capacity", Decimal("12"),
              "% of rated Ah", "common practice: chargers put back 110–120 % of the Ah taken out; 15 % extra on an "
              "80 % discharge is 12 % of rating. Water per Ah by Faraday's law (scipy.constants)"),
    Threshold("capacity_floor_percent", "replacement due: corrected capacity test under", Decimal("80"), "% of rated",
              "IEEE Std 450 practice for vented cells: replace under 80 % of rated capacity (from memory)"),
    Threshold("hot_battery_temp_c", "hot battery: electrolyte over", Decimal("55"), "°C",
              "about 55 °C is the absolute maximum for traction cells (from memory, field notes \"Measuring well\"); "
              "the battery maker's data rules"),
    Threshold("block_ocv_gap_v", "weak block: rested block voltages apart by more than", Decimal("0.10"), "V",
              COMMON),
)
BY_NAME = {t.name: t for t in THRESHOLDS}


class Resolved(policy_layers.Resolved):
    """All thresholds for one battery; attribute access gives the Decimal value."""

    def evidence(self, name):
        """A threshold as a finding records it: value, unit, where it was set and the default's source."""
        threshold, value = BY_NAME[name], self.values[name]
        return {
            "name": name,
            "label": threshold.label,
            "value": str(value.value),
            "unit": threshold.unit,
            "source": value.source if value.is_default else f"policy for {value.set_at}",
            "default": str(threshold.default),
            "default_source": threshold.source,
        }


def defaults():
    return Resolved(policy_layers.resolve_values(THRESHOLDS, None, None, ()))


def resolve(battery, policies):
    """Thresholds for `battery` from a list of Policy rows (the caller loads them once for the fleet)."""
    return resolve_for(battery.site_id, battery.profile_id, policies)


def resolve_for(site_id, profile_id, policies):
    """Thresholds for a battery of `profile_id` at `site_id`."""
    return Resolved(policy_layers.resolve_values(THRESHOLDS, site_id, profile_id, policies))

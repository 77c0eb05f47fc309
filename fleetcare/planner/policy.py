"""What the planner schedules by: built-in defaults with their sources, and how overrides apply.

A `Policy` row for a battery profile overrides a default; a row for a site overrides the profile's; a
row for that site and profile overrides both. Blank fields inherit. Intervals "by charges" are off
(0) unless set; where both a day and a charge interval are set, the sooner one counts.
"""
from decimal import Decimal

from fleetcare import policy_layers


Setting = policy_layers.Setting

SETTINGS = (
    Setting("equalize_every_days", "equalize every", Decimal(7), "days",
            "common practice (field notes): flooded traction batteries weekly, or every fifth or sixth charge",
            integer=True),
    Setting("equalize_every_charges", "equalize every (0 = not by charges)", Decimal(0), "charges",
            "off by default; common practice is every fifth or sixth charge (field notes)", integer=True),
    Setting("equalize_hours", "equalizing charge lasts, beyond the normal charge", Decimal(3), "h",
            "FleetCare default (common practice: a few hours); set the charger maker's figure"),
    Setting("equalize_gas_current", "gassing current while equalizing (I_gas)", Decimal(7), "A per 100 Ah",
            "highest I_gas the field notes give for vented cells (IEC/EN 62485-3 as tabulated in makers' "
            "literature: 2 with a 2.4 V/cell limit, up to 6 without, 5-7 on taper chargers); an equalizing "
            "charge is a deliberate overcharge without a voltage limit, so the worst tabulated case"),
    Setting("charge_gas_current", "gassing current on a normal charge (I_gas)", Decimal(2), "A per 100 Ah",
            "IEC/EN 62485-3 as tabulated in makers' literature: vented cells on IU charging with a 2.4 V/cell "
            "limit (field notes)"),
    Setting("equalize_level_readings", "equalizing done: readings in a row without a rise", Decimal(3), "readings",
            "common practice (field notes, \"Measuring well\"): three consecutive readings; Kimberly, section "
            "\"Equalizing Charge\" (from memory)", integer=True),
    Setting("equalize_reading_gap_minutes", "equalizing: a reading counts this long after the last one counted",
            Decimal(45), "minutes",
            "common practice (field notes): readings about an hour apart; 45 minutes so a reading taken a little "
            "early still counts", integer=True),
    Setting("equalize_volts_rise_per_cell", "equalizing done: charging volts rise no more than, per cell",
            Decimal("0.01"), "V per cell",
            "FleetCare default: what a battery voltmeter read to 0.01 V per cell can show; used only where the "
            "charging voltage is read on every counted reading"),
    Setting("equalize_stop_temp_c", "equalizing: stop (or do not start) at electrolyte temperature", Decimal(45),
            "°C", "commonly 45 °C for equalizing (from memory, field notes \"Measuring well\"); the battery maker's "
            "data rules"),
    Setting("water_every_days", "water every", Decimal(7), "days",
            "FleetCare default, not a published figure: water after charging (common practice, field notes); "
            "set the maker's interval"),
    Setting("water_every_charges", "water every (0 = not by charges)", Decimal(0), "charges",
            "off by default; set it where the maker gives watering by charges", integer=True),
    Setting("watering_minutes", "watering takes", Decimal(15), "minutes",
            "FleetCare default: crew time per battery, for the calendar"),
    Setting("all_cells_every_days", "read all cells every", Decimal(30), "days",
            "common practice (field notes): all cells at a fixed interval, often monthly, and always after "
            "an equalizing charge", integer=True),
    Setting("pilot_every_days", "read the pilot cell every", Decimal(7), "days",
            "common practice (field notes): the pilot cell every day or week", integer=True),
)
BY_NAME = {s.name: s for s in SETTINGS}


class Resolved(policy_layers.Resolved):
    """All settings for one battery; attribute access gives the Decimal value, .source(name) where it came from."""

    def source(self, name):
        value = self.values[name]
        return value.source if value.is_default else f"planning policy for {value.set_at}"

    def evidence(self, name):
        """A setting as a finding records it (the same shape as fleetcare.care.policy's thresholds)."""
        setting, value = BY_NAME[name], self.values[name]
        return {
            "name": name, "label": setting.label, "value": str(value.value), "unit": setting.unit,
            "source": self.source(name), "default": str(setting.default), "default_source": setting.source,
        }


def defaults():
    return Resolved(policy_layers.resolve_values(SETTINGS, None, None, ()))


def resolve(site_id, profile_id, policies):
    """Settings for a battery of `profile_id` at `site_id`, from Policy rows the caller loaded once."""
    return Resolved(policy_layers.resolve_values(SETTINGS, site_id, profile_id, policies))

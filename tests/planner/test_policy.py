"""Planning policy: documented defaults, then profile, site, and site-and-profile overrides; blank inherits."""
from decimal import Decimal

from fleetcare.planner.models import Policy
from fleetcare.planner.policy import BY_NAME, defaults, resolve


def test_it_has_the_field_notes_defaults_with_their_sources():
    d = defaults()
    assert d.equalize_every_days == Decimal(7)  # weekly: common practice (field notes)
    assert "weekly" in d.source("equalize_every_days")
    assert d.equalize_every_charges == 0  # off unless set
    assert d.equalize_hours == Decimal(3)
    assert "common practice" in d.source("equalize_hours")
    assert d.equalize_gas_current == Decimal(7)  # highest vented-cell I_gas in the field notes (5-7 taper)
    assert "62485-3" in d.source("equalize_gas_current")
    assert d.charge_gas_current == Decimal(2)  # vented cells, IU charging at 2.4 V/cell (field notes)
    assert d.water_every_days == Decimal(7)
    assert "not a published figure" in d.source("water_every_days")
    assert d.all_cells_every_days == Decimal(30)  # monthly, and after every equalizing charge (field notes)
    assert d.pilot_every_days == Decimal(7)  # every day or week (field notes)
    assert all(s.source for s in BY_NAME.values())


def test_a_profile_row_overrides_the_default_and_blank_fields_inherit(site, traction_profile):
    Policy.objects.create(profile=traction_profile, equalize_every_days=5, note="maker's manual")
    policies = list(Policy.objects.all())
    resolved = resolve(site.pk, traction_profile.pk, policies)
    assert resolved.equalize_every_days == 5
    assert resolved.source("equalize_every_days").startswith("planning policy for profile")
    assert resolved.water_every_days == Decimal(7)


def test_the_site_overrides_the_profile_and_site_and_profile_overrides_both(site, other_site, traction_profile):
    Policy.objects.create(profile=traction_profile, equalize_every_days=5, water_every_days=10)
    Policy.objects.create(site=site, equalize_every_days=6)
    Policy.objects.create(site=site, profile=traction_profile, water_every_days=3)
    policies = list(Policy.objects.all())
    here = resolve(site.pk, traction_profile.pk, policies)
    assert (here.equalize_every_days, here.water_every_days) == (6, 3)
    elsewhere = resolve(other_site.pk, traction_profile.pk, policies)
    assert (elsewhere.equalize_every_days, elsewhere.water_every_days) == (5, 10)


def test_a_site_row_for_another_profile_does_not_apply(site, traction_profile, sealed_profile):
    Policy.objects.create(site=site, profile=sealed_profile, equalize_every_days=2)
    resolved = resolve(site.pk, traction_profile.pk, list(Policy.objects.all()))
    assert resolved.equalize_every_days == 7

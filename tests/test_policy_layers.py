"""Every layered settings table (findings, planning, budget, reading entry) has the one shape of policy_layers."""
from django.apps import apps

from fleetcare import policy_layers
from fleetcare.fleet.models import BatteryProfile, Site


def _scoped_by_site_and_profile(model):
    targets = {f.related_model for f in model._meta.get_fields() if f.many_to_one and f.null}
    return {Site, BatteryProfile} <= targets


def test_every_table_scoped_by_site_and_profile_is_a_layered_policy():
    tables = [m for m in apps.get_models() if _scoped_by_site_and_profile(m)]
    assert {m._meta.label for m in tables} == {"care.Policy", "planner.Policy", "budget.Policy", "readings.EntryPolicy"}
    for model in tables:
        assert issubclass(model, policy_layers.LayeredPolicy), model
        kinds = [type(c).__name__ for c in model._meta.constraints]
        assert kinds == ["CheckConstraint", "UniqueConstraint", "UniqueConstraint", "UniqueConstraint"], model


def test_a_policy_row_names_its_scope_in_words():
    site, profile = Site(pk=1, code="nth", name="North"), BatteryProfile(pk=2, name="Traction 48 V")
    row = apps.get_model("planner", "Policy")(site=site, profile=profile)
    assert str(row) == "site nth and profile Traction 48 V"

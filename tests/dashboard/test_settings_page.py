"""The settings in force for a site and profile: value, where it was set and its source; administrators change them."""
from decimal import Decimal

import pytest
from django.urls import reverse

from fleetcare.accounts.roles import ADMINISTRATOR
from fleetcare.budget import policy as budget_policy
from fleetcare.budget.models import Policy as BudgetPolicy
from fleetcare.care import policy as care_policy
from fleetcare.care.models import Policy as CarePolicy
from fleetcare.planner import policy as planner_policy
from fleetcare.planner.models import Policy as PlannerPolicy
from fleetcare.readings import validation as entry_validation
from tests.conftest import make_user


@pytest.fixture
def admin_user(django_user_model, site):
    return make_user(django_user_model, "settings-admin", ADMINISTRATOR, [site])


def page(client, site, profile):
    return client.get(reverse("dashboard:settings_site", args=[site.code]), {"profile": profile.pk})


def row(response, key):
    return next(r for g in response.context["groups"] for r in g["rows"] if r["key"] == key)


def test_it_shows_every_declared_setting_with_its_default_and_source(client, supervisor, site, battery):
    client.force_login(supervisor)
    response = page(client, site, battery.profile)
    assert response.status_code == 200
    keys = {r["key"] for g in response.context["groups"] for r in g["rows"]}
    assert len(keys) == (len(care_policy.THRESHOLDS) + len(planner_policy.SETTINGS) + len(budget_policy.SETTINGS)
                         + len(entry_validation.SETTINGS))
    watering = row(response, "planning:water_every_days")
    assert watering["value"].value == Decimal("7") and watering["value"].is_default
    body = response.content.decode()
    assert "built-in default" in body and "not a published figure" in body
    assert "change_setting" not in str(response.context["can_change"]) and "/change/" not in body  # read only


def test_the_layers_apply_profile_then_site_then_site_and_profile(client, supervisor, site, battery):
    profile = battery.profile
    PlannerPolicy.objects.create(profile=profile, water_every_days=10, note="maker's manual")
    PlannerPolicy.objects.create(site=site, water_every_days=6)
    PlannerPolicy.objects.create(site=site, profile=profile, equalize_every_days=5)
    client.force_login(supervisor)
    response = page(client, site, profile)
    water, equalize = row(response, "planning:water_every_days"), row(response, "planning:equalize_every_days")
    assert water["value"].value == 6 and water["value"].set_at == "site tw"
    assert equalize["value"].value == 5 and equalize["value"].set_at == f"site tw and profile {profile.name}"


def test_an_administrator_sets_a_value_for_the_site_and_profile(client, admin_user, site, battery):
    client.force_login(admin_user)
    url = reverse("dashboard:change_setting", args=[site.code])
    response = client.post(url, {"key": "findings:storage_charge_days", "scope": "site_profile", "value": "10",
                                 "note": "maker's letter", "profile": battery.profile.pk})
    assert response.status_code == 302
    policy = CarePolicy.objects.get(site=site, profile=battery.profile)
    assert policy.storage_charge_days == 10 and policy.note == "maker's letter"
    assert care_policy.resolve(battery, list(CarePolicy.objects.all())).storage_charge_days == 10
    shown = row(page(client, site, battery.profile), "findings:storage_charge_days")["value"]
    assert shown.set_at == f"site tw and profile {battery.profile.name}" and shown.note == "maker's letter"
    client.post(url, {"key": "findings:storage_charge_days", "scope": "site_profile", "value": "",
                      "profile": battery.profile.pk})
    assert CarePolicy.objects.get(site=site, profile=battery.profile).storage_charge_days is None


@pytest.mark.parametrize("value, message", [("ten", "Enter a whole number"), ("-3", "greater than or equal to 0")])
def test_a_bad_value_is_refused_next_to_the_setting_and_nothing_is_stored(client, admin_user, site, battery,
                                                                          value, message):
    client.force_login(admin_user)
    response = client.post(reverse("dashboard:change_setting", args=[site.code]), {
        "key": "budget:max_cells_for_cell_option", "scope": "profile", "value": value, "profile": battery.profile.pk})
    assert response.status_code == 400
    assert message in response.content.decode() and "Nothing was saved" in response.content.decode()
    assert not BudgetPolicy.objects.exists()


def test_an_unknown_setting_is_refused(client, admin_user, site, battery):
    client.force_login(admin_user)
    response = client.post(reverse("dashboard:change_setting", args=[site.code]), {
        "key": "findings:no_such_thing", "scope": "profile", "value": "1", "profile": battery.profile.pk})
    assert response.status_code == 400 and not CarePolicy.objects.exists()


def test_a_supervisor_cannot_change_a_setting(client, supervisor, site, battery):
    client.force_login(supervisor)
    response = client.post(reverse("dashboard:change_setting", args=[site.code]), {
        "key": "findings:storage_charge_days", "scope": "site", "value": "3", "profile": battery.profile.pk})
    assert response.status_code == 403 and not CarePolicy.objects.exists()


def test_the_budget_uses_the_findings_thresholds_where_both_judge_the_same_thing(site, traction_profile):
    CarePolicy.objects.create(profile=traction_profile, capacity_floor_percent=Decimal("75"),
                              sulfation_below_full_sg=Decimal("0.040"))
    rules = budget_policy.rules(budget_policy.defaults(),
                                care_policy.resolve_for(site.pk, traction_profile.pk, list(CarePolicy.objects.all())))
    assert rules.capacity_floor_percent == 75.0 and rules.sg_drop_allowed == 0.040
    assert not {"failing_cell_drop", "failing_cell_readings"} & set(budget_policy.BY_NAME)

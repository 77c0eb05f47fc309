"""The settings in force for a site and battery profile: every declared setting, its value, where it was set
and its source; and the one write that changes a setting at a chosen level.

Findings thresholds, planning policy and the budget's rules are declared with fleetcare.policy_layers and
kept in one policy table per app; this module reads and writes all three the same way.
"""
from dataclasses import dataclass

from django.core.exceptions import ValidationError
from django.db import transaction
from django.db.models import Q

from fleetcare import policy_layers
from fleetcare.budget import policy as budget_policy
from fleetcare.budget.models import Policy as BudgetPolicy
from fleetcare.care import policy as care_policy
from fleetcare.care.models import Policy as CarePolicy
from fleetcare.planner import policy as planner_policy
from fleetcare.planner.models import Policy as PlannerPolicy
from fleetcare.readings import validation as entry_validation
from fleetcare.readings.models import EntryPolicy


@dataclass(frozen=True)
class Group:
    key: str
    title: str
    settings: tuple
    model: type


GROUPS = (
    Group("findings", "Findings", care_policy.THRESHOLDS, CarePolicy),
    Group("planning", "Planning", planner_policy.SETTINGS, PlannerPolicy),
    Group("budget", "Replacement budget", budget_policy.SETTINGS, BudgetPolicy),
    Group("entry", "Reading entry", entry_validation.SETTINGS, EntryPolicy),
)
BY_KEY = {g.key: g for g in GROUPS}
SCOPES = (("profile", "this battery profile, every site"), ("site", "this site, every profile"),
          ("site_profile", "this site and this profile"))


def settings_in_force(site, profile):
    """[{"group": Group, "rows": [...]}] for a battery of `profile` at `site`: one query per table."""
    out = []
    for group in GROUPS:
        policies = list(group.model.objects.filter(Q(site=site) | Q(site__isnull=True),
                                                   Q(profile=profile) | Q(profile__isnull=True))
                        .select_related("site", "profile"))
        values = policy_layers.resolve_values(group.settings, site.pk, profile.pk, policies)
        rows = [{"setting": s, "key": f"{group.key}:{s.name}", "value": values[s.name]} for s in group.settings]
        out.append({"group": group, "rows": rows})
    return out


def setting_field(key):
    """The form field that checks a value for `key` ("findings:weak_cell_below_mean_sg"), or None if unknown."""
    group_key, _, name = key.partition(":")
    group = BY_KEY.get(group_key)
    if group is None or name not in {s.name for s in group.settings}:
        return None
    return group.model._meta.get_field(name).formfield(required=False)


@transaction.atomic
def change_setting(*, key, scope, site, profile, value, note=""):
    """Set (or, with value None, clear) one setting at one level; returns the policy row."""
    group_key, _, name = key.partition(":")
    group = BY_KEY[group_key]
    where = {"site": site if scope in ("site", "site_profile") else None,
             "profile": profile if scope in ("profile", "site_profile") else None}
    row = group.model.objects.select_for_update().filter(**where).first()
    if row is None:
        if value is None:
            return None
        row = group.model(**where)
    setattr(row, name, value)
    if note:
        row.note = note[:200]
    try:
        row.full_clean()
    except ValidationError as error:
        raise ValidationError(error.message_dict.get(name) or error.messages) from None
    row.save()
    return row

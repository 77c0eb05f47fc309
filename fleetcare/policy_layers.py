"""Layered settings: one shape for the findings thresholds, the planning policy and the budget rules.

Each setting is declared once (`Setting`: name, label, default, unit, source). An app keeps its
overrides in a policy table whose columns are made from its declarations (`model_field`). A row for
a battery profile overrides the built-in default, a row for a site overrides the profile's, and a
row for that site and profile overrides both; blank fields inherit. `resolve` applies the layers.

Every policy table has the same shape: a subclass of `LayeredPolicy` with its verbose names and
`scope_constraints(...)`, then `add_setting_columns(...)` for its declarations.
"""
from dataclasses import dataclass
from decimal import Decimal

from django.core.validators import MinValueValidator
from django.db import models
from django.db.models import Q

DEFAULT = "built-in default"


@dataclass(frozen=True)
class Setting:
    name: str
    label: str
    default: Decimal
    unit: str
    source: str
    integer: bool = False


@dataclass(frozen=True)
class Value:
    """A setting as applied to one battery: the number, the declaration's source and where it was set."""

    name: str
    value: Decimal
    source: str
    set_at: str = DEFAULT  # "built-in default", or the policy row's scope ("site A and profile B")
    note: str = ""  # the policy row's note (why these values), if it has one

    @property
    def is_default(self):
        return self.set_at == DEFAULT


def model_field(setting, max_digits=8, decimal_places=3):
    """The nullable policy column for a setting (blank inherits from the level above)."""
    help_text = f"Default {setting.default} {setting.unit}. Source: {setting.source}. Blank uses the level above."
    if setting.integer:
        return models.PositiveIntegerField(setting.label, null=True, blank=True, help_text=help_text)
    return models.DecimalField(setting.label, max_digits=max_digits, decimal_places=decimal_places, null=True,
                               blank=True, validators=[MinValueValidator(0)], help_text=help_text)


def add_setting_columns(policy_model, settings, max_digits, decimal_places):
    """One column per declared setting on a `LayeredPolicy` table."""
    for setting in settings:
        policy_model.add_to_class(setting.name, model_field(setting, max_digits, decimal_places))


class LayeredPolicy(models.Model):
    """A row of overrides for a battery profile, a site, or a site and profile; blank columns inherit."""

    profile = models.ForeignKey("fleet.BatteryProfile", on_delete=models.CASCADE, null=True, blank=True,
                                related_name="%(app_label)s_policies")
    site = models.ForeignKey("fleet.Site", on_delete=models.CASCADE, null=True, blank=True,
                             related_name="%(app_label)s_policies")
    note = models.CharField(max_length=200, blank=True,
                            help_text="Why these values (maker's manual or letter, site rule, ...).")

    class Meta:
        abstract = True

    def __str__(self):
        return scope_label(self)


def scope_constraints(name):
    """A row names a profile, a site or both, and each scope has one row at most: `name` prefixes the constraints."""
    return [
        models.CheckConstraint(condition=Q(profile__isnull=False) | Q(site__isnull=False), name=f"{name}_has_scope"),
        models.UniqueConstraint(fields=["profile"], condition=Q(site__isnull=True), name=f"one_{name}_per_profile"),
        models.UniqueConstraint(fields=["site"], condition=Q(profile__isnull=True), name=f"one_{name}_per_site"),
        models.UniqueConstraint(fields=["site", "profile"], name=f"one_{name}_per_site_profile"),
    ]


def layers_for(site_id, profile_id, policies):
    """The policy rows that apply to a battery of profile_id at site_id, weakest first."""
    layers = [
        p for p in policies
        if (p.profile_id == profile_id and p.site_id is None)
        or (p.site_id == site_id and p.profile_id is None)
        or (p.site_id == site_id and p.profile_id == profile_id)
    ]
    return sorted(layers, key=lambda p: (p.site_id is not None, p.profile_id is not None and p.site_id is not None))


def scope_label(policy):
    """Where a policy row applies, in words: "site NTH and profile Traction 48 V"."""
    site = getattr(policy, "site", None) if policy.site_id else None
    profile = getattr(policy, "profile", None) if policy.profile_id else None
    site_name = f"site {site.code}" if site is not None else ""
    profile_name = f"profile {profile.name}" if profile is not None else ""
    return " and ".join(n for n in (site_name, profile_name) if n)


def partition(policies, prefix=""):
    """[(condition, site_id, profile_id)] splitting batteries by the sites and profiles that policy rows name
    (None: any other), so each battery falls in exactly one part and one resolution serves the whole part: how
    a SQL filter applies layered settings. `prefix` is the path to the battery from the queried model
    (e.g. "battery__")."""
    from django.db.models import Q

    site_ids = sorted({p.site_id for p in policies if p.site_id})
    profile_ids = sorted({p.profile_id for p in policies if p.profile_id})
    parts = []
    for site_id in site_ids + [None]:
        for profile_id in profile_ids + [None]:
            where = Q(**{f"{prefix}site_id": site_id}) if site_id else ~Q(**{f"{prefix}site_id__in": site_ids})
            where &= (
                Q(**{f"{prefix}profile_id": profile_id})
                if profile_id
                else ~Q(**{f"{prefix}profile_id__in": profile_ids})
            )
            parts.append((where, site_id, profile_id))
    return parts


def resolve_values(settings, site_id, profile_id, policies):
    """{name: Value} for a battery of `profile_id` at `site_id`, from policy rows the caller loaded once."""
    values = {s.name: Value(s.name, s.default, s.source) for s in settings}
    for policy in layers_for(site_id, profile_id, policies):
        for s in settings:
            value = getattr(policy, s.name)
            if value is not None:
                values[s.name] = Value(s.name, Decimal(value), s.source, set_at=scope_label(policy),
                                       note=getattr(policy, "note", ""))
    return values


class Resolved:
    """All settings for one battery: attribute access gives the Decimal value; .values holds the details."""

    def __init__(self, values):
        self.values = values

    def __getattr__(self, name):
        try:
            return self.__dict__["values"][name].value
        except KeyError:
            raise AttributeError(name) from None

    def source(self, name):
        """Where a value came from: the declaration's source, or the policy row that set it."""
        value = self.values[name]
        return value.source if value.is_default else f"policy for {value.set_at}"

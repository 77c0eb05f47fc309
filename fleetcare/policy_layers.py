"""Layered settings shared by the findings thresholds and the planning policy.

A row for a battery profile overrides the built-in default, a row for a site overrides the
profile's, and a row for that site and profile overrides both; blank fields inherit.
"""


def layers_for(site_id, profile_id, policies):
    """The policy rows that apply to a battery of profile_id at site_id, weakest first."""
    layers = [
        p for p in policies
        if (p.profile_id == profile_id and p.site_id is None)
        or (p.site_id == site_id and p.profile_id is None)
        or (p.site_id == site_id and p.profile_id == profile_id)
    ]
    return sorted(layers, key=lambda p: (p.site_id is not None, p.profile_id is not None and p.site_id is not None))


class Resolved:
    """All settings for one battery: attribute access gives the Decimal value; .values holds the details."""

    def __init__(self, values):
        self.values = values

    def __getattr__(self, name):
        try:
            return self.__dict__["values"][name].value
        except KeyError:
            raise AttributeError(name) from None

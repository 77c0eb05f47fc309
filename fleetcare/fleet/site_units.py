"""One unit per site: temperatures and water amounts as the site's people read and type them.

Stored values are always °C and mL; these helpers turn them into the site's units (°C or °F, litres or
US fl oz) and back, with the conversions from fleetcare.chemistry.units. `obj` is anything
`site_time.site_of` understands (site, battery, reading, top-up, ...).
"""
from decimal import Decimal

from fleetcare import chemistry
from fleetcare.fleet.site_time import site_of

TEMP_STEP = Decimal("0.1")
TENTH, WHOLE = Decimal("0.1"), Decimal("1")


def _site(obj):
    from fleetcare.fleet.models import Site

    return obj if isinstance(obj, Site) else site_of(obj)


def uses_fahrenheit(obj):
    return _site(obj).temp_unit == "F"


def uses_us_fl_oz(obj):
    return _site(obj).volume_unit == "floz"


def temp_label(obj):
    """'°C' or '°F'."""
    return "°F" if uses_fahrenheit(obj) else "°C"


def temp_unit_code(obj):
    """'C' or 'F', as files write it."""
    return "F" if uses_fahrenheit(obj) else "C"


def temp_shown(temp_c, obj):
    """A stored °C value in the site's unit, to 0.1 (Decimal); None stays None."""
    if temp_c is None:
        return None
    if uses_fahrenheit(obj):
        return Decimal(str(chemistry.c_to_f(float(temp_c)))).quantize(TEMP_STEP)
    return Decimal(str(temp_c)).quantize(TEMP_STEP)


def temp_typed_to_c(value, obj):
    """A temperature typed in the site's unit, as °C to 0.1 (Decimal); None stays None."""
    if value is None:
        return None
    if uses_fahrenheit(obj):
        return Decimal(str(chemistry.f_to_c(float(value)))).quantize(TEMP_STEP)
    return Decimal(str(value))


def per_degree_shown(value_per_c, obj):
    """A rate per °C (an SG correction coefficient) as written per degree of the site's unit: '0.00039/°F'."""
    if uses_fahrenheit(obj):
        return f"{Decimal(str(value_per_c)) / Decimal('1.8'):.5f}/°F"
    return f"{value_per_c}/°C"


def volume_label(obj):
    """The site's water unit as written beside an amount: 'L' or 'US fl oz'."""
    return "US fl oz" if uses_us_fl_oz(obj) else "L"


def volume_unit_code(obj):
    """'L' or 'floz', as files write it."""
    return "floz" if uses_us_fl_oz(obj) else "L"


def volume_shown(ml, obj):
    """A stored mL amount in the site's unit: litres to 0.01 L, US fl oz to 0.1 fl oz (Decimal); None stays None."""
    if ml is None:
        return None
    litres = float(ml) / 1000.0
    if uses_us_fl_oz(obj):
        return Decimal(str(chemistry.litres_to_us_fl_oz(litres))).quantize(Decimal("0.1"))
    return Decimal(str(litres)).quantize(Decimal("0.01"))


def volume_typed_to_ml(value, obj):
    """An amount typed in the site's unit, as mL (Decimal, not rounded)."""
    if value is None:
        return None
    if uses_us_fl_oz(obj):
        return Decimal(str(chemistry.us_fl_oz_to_litres(float(value)) * 1000))
    return Decimal(str(value)) * 1000


def shared_site(sites, unit_field):
    """One of `sites` to take a unit from when they all use the same `unit_field` ('temp_unit' or
    'volume_unit'), for a chart that mixes them; None when they differ (or there are none)."""
    sites = list(sites)
    if sites and len({getattr(s, unit_field) for s in sites}) == 1:
        return sites[0]
    return None


def cell_water_label(obj):
    """The unit of the small amounts a single cell takes (charts and tables per cell): 'mL' or 'US fl oz'."""
    return "US fl oz" if uses_us_fl_oz(obj) else "mL"


def cell_water_shown(ml, obj):
    """A per-cell amount in mL as shown per cell: whole mL, or US fl oz to 0.1 (Decimal); None stays None."""
    return cell_water_shown_at(obj)(ml)


def cell_water_shown_at(obj):
    """cell_water_shown for one site, as a function of the amount (a chart converts thousands of amounts)."""
    if uses_us_fl_oz(obj):
        def shown(ml):
            return None if ml is None else Decimal(str(chemistry.litres_to_us_fl_oz(float(ml) / 1000.0))).quantize(TENTH)
    else:
        def shown(ml):
            return None if ml is None else Decimal(str(float(ml))).quantize(WHOLE)
    return shown

"""Unit conversions the crews need: Fahrenheit thermometers, US fluid ounces of water."""

from scipy import constants

LITRES_PER_US_FL_OZ = constants.fluid_ounce_US * 1000.0


def f_to_c(temp_f):
    """Degrees Fahrenheit to degrees Celsius.

    Source: definition of the Fahrenheit scale, °C = (°F - 32) / 1.8 (exact).
    """
    return (temp_f - 32.0) / 1.8


def c_to_f(temp_c):
    """Degrees Celsius to degrees Fahrenheit.

    Source: definition of the Fahrenheit scale, °F = 1.8 °C + 32 (exact).
    """
    return temp_c * 1.8 + 32.0


def litres_to_us_fl_oz(litres):
    """Litres to US fluid ounces.

    Source: 1 US fl oz = 1/128 of the 231 in³ US gallon = 29.5735295625 mL exactly (NIST Handbook 44 app. C, from memory; scipy.constants).
    """
    return litres / LITRES_PER_US_FL_OZ


def us_fl_oz_to_litres(us_fl_oz):
    """US fluid ounces to litres.

    Source: 1 US fl oz = 1/128 of the 231 in³ US gallon = 29.5735295625 mL exactly (NIST Handbook 44 app. C, from memory; scipy.constants).
    """
    return us_fl_oz * LITRES_PER_US_FL_OZ

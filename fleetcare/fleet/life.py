"""When a battery's design life in years runs out: one rule for the overview, the battery list and the findings."""
import datetime as dt

DAYS_PER_YEAR = 365.25


def design_life_days(design_life_years):
    return round(float(design_life_years) * DAYS_PER_YEAR)


def design_life_end(in_service_date, design_life_years):
    """The first day the battery is past its design life."""
    return in_service_date + dt.timedelta(days=design_life_days(design_life_years))


def is_past_design_life(in_service_date, design_life_years, today):
    return design_life_end(in_service_date, design_life_years) <= today

"""The entry limits are declared settings: a site or profile may set its own, and the form follows them."""
import datetime as dt
from decimal import Decimal

from fleetcare.readings import validation
from fleetcare.readings.models import EntryPolicy

NOW = dt.datetime(2026, 12, 3, 9, 0, tzinfo=dt.timezone.utc)


def test_defaults_are_declared_with_unit_and_source():
    assert {s.name: (s.default, s.unit) for s in validation.SETTINGS} == {
        "slip_above_median_sg": (Decimal("0.020"), "SG"), "slip_below_median_sg": (Decimal("0.050"), "SG"),
        "plausible_band_margin_sg": (Decimal("0.030"), "SG"), "future_minutes": (Decimal("10"), "minutes"),
    }
    assert all(s.source for s in validation.SETTINGS)


def test_a_site_row_overrides_the_profile_row(battery):
    EntryPolicy.objects.create(profile=battery.profile, slip_above_median_sg=Decimal("0.030"))
    assert validation.limits_for(battery, NOW).slip_above == Decimal("0.030")
    EntryPolicy.objects.create(site=battery.site, slip_above_median_sg=Decimal("0.015"), future_minutes=5)
    limits = validation.limits_for(battery, NOW)
    assert (limits.slip_above, limits.future_minutes, limits.slip_below) == (Decimal("0.015"), 5, Decimal("0.050"))
    tray = {p: Decimal("1.281") for p in range(1, 25)}
    tray[2] = Decimal("1.297")  # 0.016 above: suspect at this site only
    assert list(validation.suspect_cells(tray, limits)) == [2]
    assert validation.suspect_cells(tray, validation.limits_for(battery, NOW, validation.setting_defaults())) == {}


def test_the_forms_date_rule_follows_a_sites_own_future_allowance(battery, crew_client):
    """The tablet's check reads futureMinutes from the limits; the server's form must refuse the same."""
    import uuid

    from django.urls import reverse
    from django.utils import timezone

    from fleetcare.fleet import site_time
    from fleetcare.readings.models import Inspection

    EntryPolicy.objects.create(site=battery.site, future_minutes=2)
    ahead = site_time.local(timezone.now() + dt.timedelta(minutes=5), battery)
    data = {"taken_at": ahead.strftime("%Y-%m-%dT%H:%M"), "situation": "charged", "temp": "25", "scope": "all",
            "client_uuid": str(uuid.uuid4()), **{f"sg_{n}": "1.280" for n in range(1, 25)}}
    response = crew_client.post(reverse("readings:inspect", args=[battery.pk]), data)
    assert response.status_code == 200
    assert "Taken at is in the future (more than 2 minutes from now)" in response.content.decode()
    assert not Inspection.objects.exists()

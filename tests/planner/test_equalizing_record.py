"""The equalizing record: start, readings during the charge, the levelling message, the closing reading, cautions."""
import datetime as dt
import re
import uuid

from django.urls import reverse
from django.utils import timezone

from fleetcare.care.models import Finding
from fleetcare.planner.models import EqualizingCharge, EqualizingReading


def page(client, battery):
    return client.get(reverse("planner:equalizing", args=[battery.pk]))


def start(client, battery, when):
    local = timezone.localtime(when, battery.site.tzinfo)
    return client.post(reverse("planner:equalizing", args=[battery.pk]), {
        "started_at": local.strftime("%Y-%m-%dT%H:%M"), "notes": "", "client_uuid": str(uuid.uuid4())})


def read(client, battery, when, sg, temp="25"):
    local = timezone.localtime(when, battery.site.tzinfo)
    return client.post(reverse("planner:equalizing_reading", args=[battery.pk]), {
        "taken_at": local.strftime("%Y-%m-%dT%H:%M"), "basis": "pilot", "sg": sg, "temp": temp,
        "client_uuid": str(uuid.uuid4())})


def test_every_equalizing_screen_shows_the_cautions(crew_client, battery):
    text = page(crew_client, battery).content.decode()
    for words in ("hydrogen", "ventilat", "flames or sparks", "face shield", "acid-resistant gloves",
                  "battery maker's instructions", "local codes"):
        assert words in text


def test_it_records_a_charge_and_says_when_sg_has_stopped_rising(crew_client, battery):
    began = timezone.now().replace(second=0, microsecond=0) - dt.timedelta(hours=4)
    assert start(crew_client, battery, began).status_code == 302
    charge = EqualizingCharge.objects.get(battery=battery)
    assert charge.ended_at is None
    # points as the crew types them; about every hour; rising, then within the hydrometer's 0.005 over the last
    # three (field notes, "Measuring well")
    for n, sg in enumerate(["268", "279", "285", "286", "286"]):
        response = read(crew_client, battery, began + dt.timedelta(minutes=60 * n), sg)
        assert response.status_code == 302, response.content.decode()[:500]
    text = page(crew_client, battery).content.decode()
    assert "Specific gravity has stopped rising" in text
    rises = [" ".join(td.split()) for td in re.findall(r'<td class="fc-rise">(.*?)</td>', text, re.S)]
    assert rises == ["–", "+11 points", "+6 points", "+1 point <span class=\"text-muted\">(level)</span>",
                     "0 points <span class=\"text-muted\">(level)</span>"]
    assert [str(r.sg_corrected) for r in EqualizingReading.objects.order_by("taken_at")] == [
        "1.268", "1.279", "1.285", "1.286", "1.286"]


def test_readings_too_close_together_do_not_count_toward_levelling(crew_client, battery):
    began = timezone.now().replace(second=0, microsecond=0) - dt.timedelta(hours=2)
    start(crew_client, battery, began)
    for minutes in (60, 80, 100):
        read(crew_client, battery, began + dt.timedelta(minutes=minutes), "1.286")
    text = page(crew_client, battery).content.decode()
    assert "Keep equalizing" in text and "stopped rising" not in text
    assert "under 45 min after the last" in text  # readings about an hour apart (field notes)


def test_a_rise_of_six_points_is_still_rising(crew_client, battery):
    began = timezone.now().replace(second=0, microsecond=0) - dt.timedelta(hours=4)
    start(crew_client, battery, began)
    for n, sg in enumerate(["274", "280", "286"]):
        read(crew_client, battery, began + dt.timedelta(minutes=60 * n), sg)
    assert "Keep equalizing" in page(crew_client, battery).content.decode()


def test_it_says_stop_at_the_equalizing_temperature_limit(crew_client, battery):
    began = timezone.now().replace(second=0, microsecond=0) - dt.timedelta(hours=3)
    start(crew_client, battery, began)
    read(crew_client, battery, began + dt.timedelta(minutes=60), "270", temp="41")
    assert "Stop equalizing now" not in page(crew_client, battery).content.decode()
    read(crew_client, battery, began + dt.timedelta(minutes=120), "278", temp="45")  # 45 °C (from memory; maker rules)
    text = page(crew_client, battery).content.decode()
    assert "Stop equalizing now: electrolyte at the limit" in text and "45 °C" in text
    assert not Finding.objects.filter(kind="hot_battery").exists()


def test_a_reading_over_55_degrees_opens_a_hot_battery_finding(crew_client, battery, django_capture_on_commit_callbacks):
    began = timezone.now().replace(second=0, microsecond=0) - dt.timedelta(hours=3)
    start(crew_client, battery, began)
    with django_capture_on_commit_callbacks(execute=True):
        read(crew_client, battery, began + dt.timedelta(minutes=60), "280", temp="56")
    text = page(crew_client, battery).content.decode()
    assert "Stop the charge now: the battery is hot" in text
    finding = Finding.objects.get(battery=battery, kind="hot_battery")
    assert finding.severity == Finding.Severity.URGENT
    assert "56 °C" in finding.summary and "during an equalizing charge" in finding.summary
    assert "charger" in finding.evidence["next_step"] and "shorted" in finding.evidence["next_step"]
    assert finding.evidence["threshold"]["value"] == "55"


def test_the_temperature_is_asked_on_every_reading(crew_client, battery):
    start(crew_client, battery, timezone.now() - dt.timedelta(hours=1))
    local = timezone.localtime(timezone.now() - dt.timedelta(minutes=5), battery.site.tzinfo)
    response = crew_client.post(reverse("planner:equalizing_reading", args=[battery.pk]), {
        "taken_at": local.strftime("%Y-%m-%dT%H:%M"), "basis": "pilot", "sg": "1.280", "temp": "",
        "client_uuid": str(uuid.uuid4())})
    assert response.status_code == 400 and not EqualizingReading.objects.exists()


def test_sg_is_corrected_for_the_warm_electrolyte(crew_client, battery):
    began = timezone.now().replace(second=0, microsecond=0) - dt.timedelta(hours=1)
    start(crew_client, battery, began)
    read(crew_client, battery, began + dt.timedelta(minutes=30), "1.280", temp="45")
    # 0.0007 per °C above 25 °C (profile default; field notes): 1.280 + 20 x 0.0007 = 1.294
    assert str(EqualizingReading.objects.get().sg_corrected) == "1.294"


def test_ending_the_charge_asks_for_the_closing_all_cell_reading(crew_client, battery):
    began = timezone.now().replace(second=0, microsecond=0) - dt.timedelta(hours=3)
    start(crew_client, battery, began)
    local = timezone.localtime(began + dt.timedelta(hours=3), battery.site.tzinfo)
    response = crew_client.post(reverse("planner:equalizing_end", args=[battery.pk]),
                                {"ended_at": local.strftime("%Y-%m-%dT%H:%M")})
    assert response.status_code == 302
    assert response["Location"] == reverse("readings:inspect", args=[battery.pk]) + "?scope=all&situation=equalized"
    assert EqualizingCharge.objects.get().ended_at is not None


def test_a_bad_sg_is_refused_beside_its_box(crew_client, battery):
    start(crew_client, battery, timezone.now() - dt.timedelta(hours=1))
    response = read(crew_client, battery, timezone.now() - dt.timedelta(minutes=5), "12")
    assert response.status_code == 400
    assert "ambiguous" in response.content.decode() or "not a number" in response.content.decode() or \
        "outside" in response.content.decode()
    assert not EqualizingReading.objects.exists()


def test_a_sealed_pair_is_never_equalized(client, django_user_model, care_site, sealed_battery):
    from tests.conftest import make_user

    client.force_login(make_user(django_user_model, "crew-care", "crew", [care_site]))
    text = page(client, sealed_battery).content.decode()
    assert "Do not equalize this battery" in text
    start(client, sealed_battery, timezone.now())
    assert not EqualizingCharge.objects.exists()


def test_another_sites_battery_answers_404(crew_client, other_battery):
    assert page(crew_client, other_battery).status_code == 404
    assert crew_client.post(reverse("planner:equalizing_end", args=[other_battery.pk]), {}).status_code == 404

"""The label sheet: rasterised with poppler's pdftoppm and every QR code read back with zxing-cpp (a decoder
independent of segno, which made them) to exactly the batteries asked for, in each layout."""
import datetime as dt
import io
import os
import shutil
import subprocess
from pathlib import Path

import pytest
import zxingcpp
from django.core.management import CommandError, call_command
from django.urls import reverse
from PIL import Image

from fleetcare.fleet.models import Battery
from fleetcare.labels import selectors
from fleetcare.labels.sheets import LAYOUTS, label_sheet

BASE = "https://fleetcare.example.com"
ARTIFACTS = Path(__file__).resolve().parents[2] / "test-artifacts" / "labels"
PDFTOPPM = shutil.which("pdftoppm")
# Under CI=true a missing poppler fails these tests instead of skipping them (.ci/run installs it).
needs_poppler = pytest.mark.skipif(PDFTOPPM is None and os.environ.get("CI", "").lower() not in ("1", "true", "yes"),
                                   reason="pdftoppm (Debian package poppler-utils) is not installed")


def read_codes(pdf, keep_as=None):
    """Every QR code on every page, as (page number, text); keep_as: keep page 1 in test-artifacts/labels/ to look at."""
    found = []
    for number, image in enumerate(rasterised(pdf), start=1):
        if keep_as and number == 1:
            ARTIFACTS.mkdir(parents=True, exist_ok=True)
            image.save(ARTIFACTS / f"{keep_as}.png")
        found += [(number, code.text) for code in zxingcpp.read_barcodes(image, formats=zxingcpp.BarcodeFormat.QRCode)]
    return found


def rasterised(pdf, dpi=150):
    out = subprocess.run([PDFTOPPM, "-r", str(dpi), "-gray"], input=pdf, capture_output=True, check=True).stdout
    # pdftoppm writes the pages one after the other as PGM images to standard output.
    images, at = [], 0
    while at < len(out):
        image = Image.open(io.BytesIO(out[at:]))
        image.load()
        images.append(image)
        at += _pgm_length(out, at)
    return images


def _pgm_length(data, at):
    """Bytes in the binary PGM starting at `at`: a header of four fields, then width × height bytes."""
    fields, pos = [], at
    while len(fields) < 4:
        while data[pos:pos + 1].isspace():
            pos += 1
        if data[pos:pos + 1] == b"#":
            pos = data.index(b"\n", pos) + 1
            continue
        end = pos
        while not data[end:end + 1].isspace():
            end += 1
        fields.append(data[pos:end])
        pos = end
    width, height = int(fields[1]), int(fields[2])
    return pos + 1 - at + width * height


@pytest.fixture
def fleet(site, traction_profile, sealed_profile):
    made = [Battery.objects.create(serial=f"TW-{n:03d}", profile=traction_profile, site=site,
                                   in_service_date=dt.date(2024, 1, 1)) for n in range(1, 13)]
    made.append(Battery.objects.create(serial="TW-PAIR/7", profile=sealed_profile, site=site, in_service_date=dt.date(2025, 1, 1)))
    Battery.objects.create(serial="TW-GONE", profile=traction_profile, site=site, status=Battery.Status.RETIRED,
                           in_service_date=dt.date(2015, 1, 1))
    return made


def url_of(battery):
    return BASE + reverse("labels:battery", args=[battery.site.code, battery.serial])


@needs_poppler
@pytest.mark.parametrize("layout, per_page", [("a4", 8), ("letter", 10), ("single", 1)])
def test_every_code_on_the_sheet_reads_back_as_exactly_the_batteries_asked_for(site, fleet, layout, per_page):
    asked = ["TW-003", "TW-PAIR/7", "TW-011", "TW-001", "TW-004", "TW-005", "TW-006", "TW-007", "TW-008", "TW-009", "TW-010"]
    pdf = selectors.sheet_pdf(site, asked, layout, BASE)
    codes = read_codes(pdf, keep_as=f"label-sheet-{layout}")
    by_serial = {b.serial: b for b in fleet}
    assert [text for _, text in codes] != []
    assert sorted(text for _, text in codes) == sorted(url_of(by_serial[s]) for s in asked)
    # Filled in the order asked, page by page.
    pages_used = {}
    for number, text in codes:
        pages_used.setdefault(number, []).append(text)
    assert len(pages_used) == -(-len(asked) // per_page)
    assert all(len(texts) <= per_page for texts in pages_used.values())


@needs_poppler
def test_the_whole_site_gets_a_label_for_every_battery_but_the_retired(site, fleet, other_battery):
    codes = read_codes(selectors.sheet_pdf(site, [], "a4", BASE))
    assert sorted(text for _, text in codes) == sorted(url_of(b) for b in fleet)


def test_the_code_holds_the_batterys_address_and_nothing_else(site, fleet):
    label = selectors.labels_for([fleet[0]], BASE)[0]
    assert label.url == "https://fleetcare.example.com/labels/b/tw/TW-001/"
    assert label.profile == "24 cells · 48 V · 775 Ah"
    assert label.site == "Test warehouse"
    assert selectors.labels_for([fleet[-1]], BASE)[0].profile == "12 cells in 2 blocks · 24 V · 60 Ah"


@needs_poppler
def test_a_label_shows_the_serial_profile_site_and_caution_as_text(site, fleet):
    text = subprocess.run(["pdftotext", "-", "-"], input=selectors.sheet_pdf(site, ["TW-001"], "single", BASE),
                          capture_output=True, check=True).stdout.decode()
    for words in ("TW-001", "24 cells · 48 V · 775 Ah", "Test warehouse", "Acid burns", "explosive", "hydrogen"):
        assert words in text


@needs_poppler
def test_a_sealed_batterys_label_has_the_sealed_caution(sealed_battery):
    text = subprocess.run(["pdftotext", "-", "-"], capture_output=True, check=True,
                          input=selectors.sheet_pdf(sealed_battery.site, ["TR-P01"], "single", BASE)).stdout.decode()
    text = " ".join(text.split())
    assert "never add water" in text and "hydrogen" in text
    assert "Acid" not in text and "face shield" not in text


def test_a_retired_or_unknown_battery_gets_no_label_and_says_why(site, fleet, other_battery):
    with pytest.raises(selectors.LabelError, match="TW-GONE was retired"):
        selectors.sheet_pdf(site, ["TW-001", "TW-GONE"], "a4", BASE)
    with pytest.raises(selectors.LabelError, match="No battery OT-001 at Test warehouse"):
        selectors.sheet_pdf(site, ["OT-001"], "a4", BASE)


def test_the_base_address_is_the_setting_else_the_request(rf, settings):
    settings.ALLOWED_HOSTS = ["tablet.example"]
    settings.FLEETCARE_BASE_URL = ""
    assert selectors.base_url(rf.get("/labels/", HTTP_HOST="tablet.example:8443")) == "http://tablet.example:8443"
    settings.FLEETCARE_BASE_URL = "https://fleet.example.org"
    assert selectors.base_url(rf.get("/labels/")) == "https://fleet.example.org"
    with pytest.raises(selectors.LabelError, match="must start with https://"):
        selectors.base_url(override="fleet.example.org")


@needs_poppler
def test_the_command_writes_the_same_sheet_as_the_page(site, fleet, supervisor, client, tmp_path, settings):
    settings.FLEETCARE_BASE_URL = BASE
    out = tmp_path / "labels.pdf"
    call_command("labels", "--site", "tw", "--battery", "TW-002", "--battery", "TW-001", "--layout", "letter", "-o", str(out),
                 stdout=io.StringIO())
    client.force_login(supervisor)
    response = client.get(reverse("labels:sheet", args=["tw"]), {"layout": "letter", "battery": ["TW-002", "TW-001"]})
    assert response["Content-Type"] == "application/pdf"
    assert response.content == out.read_bytes()
    assert [text for _, text in read_codes(out.read_bytes())] == [url_of(fleet[1]), url_of(fleet[0])]


def test_the_command_says_what_is_wrong(site, fleet, tmp_path, settings):
    settings.FLEETCARE_BASE_URL = ""
    with pytest.raises(CommandError, match="FLEETCARE_BASE_URL"):
        call_command("labels", "--site", "tw", "-o", str(tmp_path / "x.pdf"))
    with pytest.raises(CommandError, match="No site with code “nope”"):
        call_command("labels", "--site", "nope", "--base-url", BASE, "-o", str(tmp_path / "x.pdf"))
    with pytest.raises(CommandError, match="TW-GONE was retired"):
        call_command("labels", "--site", "tw", "--battery", "TW-GONE", "--base-url", BASE, "-o", str(tmp_path / "x.pdf"))


def test_the_print_page_lists_the_sites_batteries_and_sheets(client, supervisor, site, fleet):
    client.force_login(supervisor)
    html = client.get(reverse("labels:print"), {"site": "tw"}).content.decode()
    assert html.count('name="battery"') == len(fleet)  # the retired one is not offered
    assert "TW-GONE" not in html
    for layout in LAYOUTS.values():
        assert layout.name in html


def test_the_page_sends_a_bad_choice_back_with_its_reason(client, supervisor, site, fleet):
    client.force_login(supervisor)
    response = client.get(reverse("labels:sheet", args=["tw"]), {"battery": ["TW-GONE"]}, follow=True)
    assert "TW-GONE was retired: retired batteries get no label." in response.content.decode()


def test_crew_cannot_print_labels(crew_client, site):
    assert crew_client.get(reverse("labels:sheet", args=["tw"])).status_code == 403


def test_an_empty_sheet_is_still_a_pdf():
    assert label_sheet([], "a4").startswith(b"%PDF")

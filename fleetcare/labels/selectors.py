"""Which batteries get labels, what a label's code holds, and what a scanned code opens.

A label's QR code holds the battery's address in FleetCare, `<base>/labels/b/<site code>/<serial>/`:
any phone camera opens it, and it holds nothing secret (the page behind it needs a sign-in). <base> is
settings.FLEETCARE_BASE_URL where set, else the address the supervisor printing the labels used.
"""
from dataclasses import dataclass
from decimal import Decimal

from django.conf import settings
from django.urls import reverse

from fleetcare.fleet.access import visible_batteries, visible_sites
from fleetcare.fleet.models import Battery
from fleetcare.labels.sheets import Label, label_sheet
from fleetcare.planner.selectors import just_equalized
from fleetcare.readings.models import Inspection


class LabelError(Exception):
    """Labels that cannot be made as asked (an unknown or retired battery, no base address)."""


# What a scanned label opens, or why it opens nothing. The tablet's scan screen gets these texts as data,
# so the camera and a phone opening the address say the same words.
OPEN, RETIRED, OTHER_SITE, UNKNOWN, NOT_OURS = "open", "retired", "other_site", "unknown", "not_ours"
MESSAGES = {
    RETIRED: "{serial} was retired: it takes no more readings, so nothing was opened. Take its label off the "
             "tray and tell your supervisor.",
    OTHER_SITE: "This label is for a battery of another site (“{site}”), not one of yours, so nothing was opened. "
                "Check you are in the right battery room.",
    UNKNOWN: "There is no battery {serial} at your site “{site}”, so nothing was opened. Find the battery by its "
             "serial or truck number instead.",
    NOT_OURS: "This code is not a FleetCare battery label, so nothing was opened. Find the battery by its serial "
              "or truck number instead.",
}


@dataclass(frozen=True)
class Outcome:
    kind: str
    message: str = ""
    url: str = ""


def base_url(request=None, override=""):
    """Where FleetCare is reached from the battery room: the override, else FLEETCARE_BASE_URL, else the request's."""
    base = (override or settings.FLEETCARE_BASE_URL or "").strip()
    if not base and request is not None:
        base = request.build_absolute_uri("/")
    if not base:
        raise LabelError("Say where FleetCare is reached (set FLEETCARE_BASE_URL or pass --base-url, for example "
                         "https://fleetcare.example.com): the labels' codes hold that address.")
    if not base.startswith(("http://", "https://")):
        raise LabelError(f"The base address “{base}” must start with https:// (or http://).")
    return base.rstrip("/")


def label_path(site_code, serial):
    return reverse("labels:battery", args=[site_code, serial])


def label_prefix():
    """The part of every label's path before the site code."""
    return label_path("SITE", "SERIAL").split("SITE/")[0]


def _number(value):
    return f"{Decimal(value).normalize():f}"


def profile_line(profile):
    """Cells, volts and Ah as a label shows them: "24 cells · 48 V · 775 Ah"."""
    cells = f"{profile.cell_count} cells"
    if profile.monoblocks > 1:
        cells += f" in {profile.monoblocks} blocks"
    return f"{cells} · {_number(profile.nominal_voltage)} V · {_number(profile.capacity_ah)} Ah"


def batteries_to_label(site, serials=None):
    """The site's batteries to label: those named (in the order given), or every one not retired."""
    batteries = Battery.objects.filter(site=site).select_related("profile", "site").order_by("serial")
    if not serials:
        return list(batteries.active())
    wanted = list(dict.fromkeys(serials))
    found = {b.serial: b for b in batteries.filter(serial__in=wanted)}
    problems = [f"No battery {s} at {site.name}." for s in wanted if s not in found]
    problems += [f"{s} was retired: retired batteries get no label." for s in wanted
                 if s in found and found[s].status == Battery.Status.RETIRED]
    if problems:
        raise LabelError(" ".join(problems))
    return [found[s] for s in wanted]


def labels_for(batteries, base):
    return [
        Label(serial=b.serial, profile=profile_line(b.profile), site=b.site.name,
              url=base + label_path(b.site.code, b.serial), sealed=b.profile.reads_by_block)
        for b in batteries
    ]


def sheet_pdf(site, serials, layout, base):
    """The label sheet the print page and `manage.py labels` both make. Raises LabelError."""
    return label_sheet(labels_for(batteries_to_label(site, serials), base), layout, title=f"FleetCare labels · {site.name}")


def resolve_label(user, site_code, serial):
    """What a scanned label of (site code, serial) opens for this user: the battery's entry screen, or a reason."""
    battery = visible_batteries(user).filter(serial=serial).select_related("site").first()
    if battery is None:
        site = visible_sites(user).filter(code=site_code).first()
        if site is None:
            return Outcome(OTHER_SITE, MESSAGES[OTHER_SITE].format(site=site_code, serial=serial))
        return Outcome(UNKNOWN, MESSAGES[UNKNOWN].format(site=site.name, serial=serial))
    if battery.status == Battery.Status.RETIRED:
        return Outcome(RETIRED, MESSAGES[RETIRED].format(serial=battery.serial, site=battery.site.name))
    equalized = just_equalized(Battery.objects.filter(pk=battery.pk))
    return Outcome(OPEN, url=entry_url(battery, battery.pk in equalized))


def entry_url(battery, just_equalized=False):
    """The battery's entry screen, opened by a scan; after an equalizing charge as today's task for it opens
    (all cells, "Just equalized" chosen)."""
    url = reverse("readings:inspect", args=[battery.pk]) + f"?via={Inspection.ChosenVia.SCAN}"
    return url + "&scope=all&situation=equalized" if just_equalized else url


def scan_data(user, base):
    """What the scan screen needs to judge a code without the network: the same facts resolve_label uses."""
    batteries = visible_batteries(user).select_related("site").order_by("serial")
    equalized = just_equalized(visible_batteries(user))
    return {
        "bases": [base],
        "prefix": label_prefix(),
        "messages": MESSAGES,
        "sites": {site.code: site.name for site in visible_sites(user)},
        "batteries": {
            b.serial: {"url": entry_url(b, b.pk in equalized), "retired": b.status == Battery.Status.RETIRED, "site": b.site.name}
            for b in batteries
        },
    }

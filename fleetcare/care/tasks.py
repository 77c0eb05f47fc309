"""Findings passes that run in the background worker: after an import, and the supervisors' "check now"."""
import logging

from django.contrib.auth import get_user_model
from django_tasks import task

from fleetcare.fleet.access import visible_batteries
from fleetcare.care import detection
from fleetcare.care.models import Finding
from fleetcare.fleet.models import Battery

log = logging.getLogger(__name__)


@task()
def check_batteries(battery_ids: list) -> None:
    """One findings pass over the batteries an import touched."""
    detection.detect_for_batteries(Battery.objects.filter(pk__in=battery_ids), answer=False)


@task()
def check_sites(user_id: int, site_code: str = "") -> int:
    """A findings pass over every battery the user can see (or those of one site); returns the open findings."""
    batteries = visible_batteries(get_user_model().objects.get(pk=user_id))
    if site_code:
        batteries = batteries.filter(site__code=site_code)
    detection.detect_for_batteries(batteries, answer=False)
    return Finding.objects.active().filter(battery__in=batteries).count()


def after_import(sender, battery_ids, **kwargs):
    """Once an import has committed, its findings pass is queued for the worker (one pass for all its batteries)."""
    try:
        check_batteries.enqueue(list(battery_ids))
    except Exception:  # the import is already committed; queueing its check must not turn it into an error
        log.exception("could not queue the findings pass after an import of %d batteries", len(battery_ids))

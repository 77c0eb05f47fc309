"""Refuse sign-in for a while after repeated failures for one username from one address.

Failures are rows in SignInFailure, so every web worker sees the same count (a per-process cache
would let each worker allow its own five tries). Policy: FLEETCARE_SIGNIN_MAX_FAILURES failures
within FLEETCARE_SIGNIN_WINDOW_MINUTES lock that username and address for
FLEETCARE_SIGNIN_LOCK_MINUTES after the last failure (defaults 5, 15, 15: common practice).
Attempts refused while locked are not counted, so the lock ends on time.
"""
import datetime as dt

from django.conf import settings
from django.utils import timezone

from fleetcare.accounts.models import SignInFailure

KEEP_FAILURES = dt.timedelta(days=1)


def max_failures():
    return settings.FLEETCARE_SIGNIN_MAX_FAILURES


def window():
    return dt.timedelta(minutes=settings.FLEETCARE_SIGNIN_WINDOW_MINUTES)


def lock_time():
    return dt.timedelta(minutes=settings.FLEETCARE_SIGNIN_LOCK_MINUTES)


def client_ip(request):
    """The address the request came from. Behind a proxy this is the proxy's: the lock is then per username."""
    if request is None:
        return None
    return request.META.get("REMOTE_ADDR") or None


def _key(username):
    return (username or "").strip().casefold()[:150]


def locked_until(username, ip, now=None):
    """When the lock on this username and address ends, or None if sign-in is allowed now."""
    now = now or timezone.now()
    limit = max_failures()
    recent = list(
        SignInFailure.objects.filter(username=_key(username), ip_address=ip, failed_at__gt=now - window() - lock_time())
        .order_by("-failed_at")
        .values_list("failed_at", flat=True)[:limit]
    )
    if len(recent) < limit or recent[0] - recent[-1] > window():
        return None
    until = recent[0] + lock_time()
    return until if now < until else None


def record_failure(username, ip, now=None):
    now = now or timezone.now()
    SignInFailure.objects.create(username=_key(username), ip_address=ip, failed_at=now)
    SignInFailure.objects.filter(failed_at__lt=now - KEEP_FAILURES).delete()


def clear_failures(username, ip):
    SignInFailure.objects.filter(username=_key(username), ip_address=ip).delete()


def lock_message(until, now=None):
    now = now or timezone.now()
    minutes = max(1, -(-int((until - now).total_seconds()) // 60))
    return (
        f"Too many failed sign-ins for this username from this device. For your account's safety, "
        f"sign-in is paused: try again in {minutes} minute{'s' if minutes != 1 else ''} "
        f"(at {timezone.localtime(until):%H:%M}), or ask an administrator to reset your password."
    )

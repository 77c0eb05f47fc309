"""Pause sign-in after repeated failures, without letting a stranger lock the real user out.

Failures are rows in SignInFailure, so every web worker sees the same count (a per-process cache
would let each worker allow its own tries). Three counts, each within FLEETCARE_SIGNIN_WINDOW_MINUTES,
each pausing for FLEETCARE_SIGNIN_LOCK_MINUTES after the last failure (common practice):

- one username from one address (FLEETCARE_SIGNIN_MAX_FAILURES, 5): a person mistyping, or a guesser;
- one address, any usernames (FLEETCARE_SIGNIN_ADDRESS_MAX_FAILURES, 10): one password tried on many
  accounts ("spraying") stops after ten accounts;
- one username, any addresses (FLEETCARE_SIGNIN_USERNAME_MAX_FAILURES, 10): guessing one account's
  password from many addresses stops after ten guesses.

A browser where someone signed in before carries a signed "known device" cookie naming (by digest) the
usernames that signed in on it. For those usernames it is counted on its own (five failures on that
device) and the address and username pauses do not apply to it: whatever strangers do elsewhere, or on
the same shared network, the real user's own tablet still signs in (OWASP, "Slow Down Online Guessing
Attacks with Device Cookies"). A new device during an attack on the account waits for the pause to end.

The client's address is REMOTE_ADDR, or, when FLEETCARE_TRUSTED_PROXIES says how many proxies of ours
stand in front, the X-Forwarded-For entry the outermost of them wrote: entries before it are whatever the
client sent and are never believed. Attempts refused while paused are not counted, so a pause ends on time.
"""
import datetime as dt
import hashlib
import ipaddress
import secrets
from dataclasses import dataclass

from django.conf import settings
from django.core import signing
from django.db.models import Q
from django.utils import timezone

from fleetcare.accounts.models import SignInFailure

KEEP_FAILURES = dt.timedelta(days=1)
DEVICE_COOKIE = "fleetcare_device"
DEVICE_SALT = "fleetcare.accounts.known-device"
DEVICE_USERS_KEPT = 50  # a shared tablet remembers the last fifty people who signed in on it

# Which count paused sign-in: the message says what the person can do about it.
PAIR, ADDRESS, USERNAME, DEVICE = "pair", "address", "username", "device"


def window():
    return dt.timedelta(minutes=settings.FLEETCARE_SIGNIN_WINDOW_MINUTES)


def lock_time():
    return dt.timedelta(minutes=settings.FLEETCARE_SIGNIN_LOCK_MINUTES)


def client_ip(request):
    """The address the request came from: REMOTE_ADDR, or the one our own proxies recorded in X-Forwarded-For."""
    if request is None:
        return None
    remote = request.META.get("REMOTE_ADDR") or None
    hops = settings.FLEETCARE_TRUSTED_PROXIES
    if hops <= 0:
        return remote
    entries = [part.strip() for part in request.META.get("HTTP_X_FORWARDED_FOR", "").split(",")]
    entries = [part for part in entries if part]
    if len(entries) < hops:
        return remote  # the request did not come through all of our proxies
    try:
        return str(ipaddress.ip_address(entries[-hops]))
    except ValueError:
        return remote


def _key(username):
    return (username or "").strip().casefold()[:150]


def _digest(username):
    return hashlib.sha256(_key(username).encode()).hexdigest()[:16]


def read_device(request):
    """(device id, username digests) from the known-device cookie, or (None, ()) if absent, forged or expired."""
    raw = request.COOKIES.get(DEVICE_COOKIE) if request is not None else None
    if not raw:
        return None, ()
    try:
        value = signing.loads(raw, salt=DEVICE_SALT, max_age=dt.timedelta(days=settings.FLEETCARE_SIGNIN_DEVICE_DAYS))
        device, users = str(value["d"])[:32], tuple(str(u) for u in value["u"])
    except (signing.BadSignature, KeyError, TypeError, ValueError):
        return None, ()
    return device, users


def device_cookie_after_sign_in(request, username):
    """The cookie value that marks this browser as one where username signed in (kept for the middleware)."""
    device, users = read_device(request)
    digest = _digest(username)
    users = [u for u in users if u != digest][-(DEVICE_USERS_KEPT - 1):] + [digest]
    return signing.dumps({"d": device or secrets.token_hex(16), "u": users}, salt=DEVICE_SALT, compress=True)


@dataclass(frozen=True)
class Attempt:
    """Who is trying to sign in, from where, and whether this browser is one they signed in on before."""

    username: str
    ip: str | None
    device: str | None
    known_device: bool

    @classmethod
    def of(cls, request, username):
        device, users = read_device(request)
        return cls(_key(username), client_ip(request), device, device is not None and _digest(username) in users)


@dataclass(frozen=True)
class Lock:
    until: dt.datetime
    kind: str


def _lock_end(failures, limit, now):
    """When a pause over these failures ends: `limit` of them within the window, paused from the last one."""
    recent = list(
        failures.filter(failed_at__gt=now - window() - lock_time()).order_by("-failed_at")
        .values_list("failed_at", flat=True)[:limit]
    )
    if len(recent) < limit or recent[0] - recent[-1] > window():
        return None
    until = recent[0] + lock_time()
    return until if now < until else None


def lock_for(attempt, now=None):
    """The pause in force for this attempt (the one that ends last), or None if sign-in is allowed now."""
    now = now or timezone.now()
    failures = SignInFailure.objects.all()
    if attempt.known_device:
        counts = [(DEVICE, failures.filter(username=attempt.username, device=attempt.device),
                   settings.FLEETCARE_SIGNIN_MAX_FAILURES)]
    else:
        counts = [
            (PAIR, failures.filter(username=attempt.username, ip_address=attempt.ip), settings.FLEETCARE_SIGNIN_MAX_FAILURES),
            (USERNAME, failures.filter(username=attempt.username), settings.FLEETCARE_SIGNIN_USERNAME_MAX_FAILURES),
        ]
        if attempt.ip is not None:
            counts.append((ADDRESS, failures.filter(ip_address=attempt.ip), settings.FLEETCARE_SIGNIN_ADDRESS_MAX_FAILURES))
    locks = [Lock(until, kind) for kind, rows, limit in counts if (until := _lock_end(rows, limit, now))]
    return max(locks, key=lambda lock: lock.until, default=None)


def record_failure(attempt, now=None):
    now = now or timezone.now()
    SignInFailure.objects.create(username=attempt.username, ip_address=attempt.ip, device=attempt.device or "",
                                 failed_at=now)
    SignInFailure.objects.filter(failed_at__lt=now - KEEP_FAILURES).delete()


def clear_failures(attempt):
    """A success forgets that username's failures from this address and this device (never other usernames')."""
    same_place = Q(ip_address=attempt.ip)
    if attempt.device:
        same_place |= Q(device=attempt.device)
    SignInFailure.objects.filter(same_place, username=attempt.username).delete()


MESSAGES = {
    PAIR: "Too many failed sign-ins for this username from this device. For your account's safety, sign-in is paused",
    DEVICE: "Too many failed sign-ins for this username on this device. For your account's safety, sign-in is paused",
    ADDRESS: ("Too many failed sign-ins from this network address. Sign-in from here is paused, except on a device "
              "where you signed in before"),
    USERNAME: ("Too many failed sign-ins for this username from several places. For your account's safety, sign-in "
               "on a device you have not used before is paused (a device where you signed in before still works)"),
}


def lock_message(lock, now=None):
    now = now or timezone.now()
    minutes = max(1, -(-int((lock.until - now).total_seconds()) // 60))
    return (
        f"{MESSAGES[lock.kind]}: try again in {minutes} minute{'s' if minutes != 1 else ''} "
        f"(at {timezone.localtime(lock.until):%H:%M}), or ask an administrator to reset your password."
    )

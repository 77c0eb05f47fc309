"""The sign-in backend: Django's own, refusing sign-in while a pause is in force (fleetcare/accounts/throttle.py)."""
from django.contrib.auth.backends import ModelBackend
from django.contrib.auth.signals import user_logged_in, user_login_failed
from django.core.exceptions import PermissionDenied
from django.dispatch import receiver

from fleetcare.accounts import throttle

REFUSED = "_fleetcare_signin_refused"
SIGNED_IN_DEVICE = "_fleetcare_known_device"


class ThrottledModelBackend(ModelBackend):
    """Covers every sign-in form (ours and the admin's): while paused, the password is not even checked."""

    def authenticate(self, request, username=None, password=None, **kwargs):
        if username is None:
            username = kwargs.get("username")
        if username is not None:
            lock = throttle.lock_for(throttle.Attempt.of(request, username))
            if lock:
                if request is not None:
                    setattr(request, REFUSED, lock)
                raise PermissionDenied("Sign-in paused after repeated failures.")
        return super().authenticate(request, username=username, password=password, **kwargs)


@receiver(user_login_failed)
def _count_failure(sender, credentials, request=None, **kwargs):
    username = credentials.get("username")
    if username is None or getattr(request, REFUSED, None):
        return
    throttle.record_failure(throttle.Attempt.of(request, username))


@receiver(user_logged_in)
def _forget_failures(sender, request, user, **kwargs):
    if request is None:
        return
    throttle.clear_failures(throttle.Attempt.of(request, user.get_username()))
    # KnownDeviceMiddleware sets the cookie on the answer: this browser is now one where this user signed in.
    setattr(request, SIGNED_IN_DEVICE, throttle.device_cookie_after_sign_in(request, user.get_username()))

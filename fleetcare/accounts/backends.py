"""The sign-in backend: Django's own, refusing usernames that are locked after repeated failures."""
from django.contrib.auth.backends import ModelBackend
from django.contrib.auth.signals import user_logged_in, user_login_failed
from django.core.exceptions import PermissionDenied
from django.dispatch import receiver

from fleetcare.accounts import throttle

REFUSED = "_fleetcare_signin_refused"


class ThrottledModelBackend(ModelBackend):
    """Covers every sign-in form (ours and the admin's): a locked username is refused before its password is checked."""

    def authenticate(self, request, username=None, password=None, **kwargs):
        if username is None:
            username = kwargs.get("username")
        if username is not None and throttle.locked_until(username, throttle.client_ip(request)):
            if request is not None:
                setattr(request, REFUSED, True)
            raise PermissionDenied("Sign-in paused after repeated failures.")
        return super().authenticate(request, username=username, password=password, **kwargs)


@receiver(user_login_failed)
def _count_failure(sender, credentials, request=None, **kwargs):
    username = credentials.get("username")
    if username is None or getattr(request, REFUSED, False):
        return
    throttle.record_failure(username, throttle.client_ip(request))


@receiver(user_logged_in)
def _forget_failures(sender, request, user, **kwargs):
    if request is not None:
        throttle.clear_failures(user.get_username(), throttle.client_ip(request))

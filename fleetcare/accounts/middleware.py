import zoneinfo

from django.conf import settings
from django.http import HttpResponseBadRequest, JsonResponse
from django.utils import timezone
from django.utils.cache import patch_cache_control


class SiteTimezoneMiddleware:
    """A user whose sites all share one zone reads every page in it; anyone else gets UTC until a page
    about one site's things switches to that site's clock (fleet.site_time.site_clock) or shows each
    time in its own site's zone, labelled (the `site_time` filter)."""

    def __init__(self, get_response):
        self.get_response = get_response

    def __call__(self, request):
        zones = set()
        user = getattr(request, "user", None)
        if user is not None and user.is_authenticated:
            zones = set(user.sites.order_by().values_list("timezone", flat=True).distinct()[:2])
        if len(zones) == 1:
            timezone.activate(zoneinfo.ZoneInfo(zones.pop()))
        else:
            timezone.deactivate()
        return self.get_response(request)


class ContentSecurityPolicyMiddleware:
    """Send settings.CONTENT_SECURITY_POLICY on every response, in every mode, so tests see what production sends."""

    def __init__(self, get_response):
        self.get_response = get_response

    def __call__(self, request):
        response = self.get_response(request)
        response.headers.setdefault("Content-Security-Policy", policy_header(settings.CONTENT_SECURITY_POLICY))
        return response


def policy_header(policy):
    return "; ".join(f"{directive} {' '.join(sources)}" for directive, sources in policy.items())


class PrivateResponsesMiddleware:
    """Answers made by the app (pages, exports, API) are for one person: no shared or disk cache may keep them.

    Static files never reach this (whitenoise answers them first, cacheable for a year under hashed names);
    a view that chose its own Cache-Control keeps it.
    """

    def __init__(self, get_response):
        self.get_response = get_response

    def __call__(self, request):
        response = self.get_response(request)
        if "Cache-Control" not in response.headers:
            patch_cache_control(response, private=True, no_store=True)
        return response


class KnownDeviceMiddleware:
    """After a sign-in, mark the browser as one where that user signed in (the sign-in throttle trusts it)."""

    def __init__(self, get_response):
        self.get_response = get_response

    def __call__(self, request):
        from fleetcare.accounts import backends, throttle

        response = self.get_response(request)
        value = getattr(request, backends.SIGNED_IN_DEVICE, None)
        if value:
            response.set_cookie(
                throttle.DEVICE_COOKIE, value, max_age=settings.FLEETCARE_SIGNIN_DEVICE_DAYS * 86400,
                secure=settings.SESSION_COOKIE_SECURE, httponly=True, samesite="Lax",
            )
        return response


class RefuseNulInAddressMiddleware:
    """An address or query holding a NUL character is refused before any view sees it.

    No address of ours holds one, and PostgreSQL cannot compare text with it (a lookup would fail with a 500).
    Form fields are not checked here: their forms refuse a NUL beside the field.
    """

    MESSAGE = "The address holds a character that no address here contains (a NUL). Check the link and try again."

    def __init__(self, get_response):
        self.get_response = get_response

    def __call__(self, request):
        if "\x00" in request.path or any("\x00" in text for key, values in request.GET.lists() for text in [key, *values]):
            if request.path.startswith("/api/"):
                return JsonResponse({"detail": self.MESSAGE, "errors": {}}, status=400)
            return HttpResponseBadRequest(self.MESSAGE, content_type="text/plain; charset=utf-8")
        return self.get_response(request)

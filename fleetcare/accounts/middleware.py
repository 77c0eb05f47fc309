from django.conf import settings
from django.utils import timezone
from django.utils.cache import patch_cache_control


class SiteTimezoneMiddleware:
    """Show times in the signed-in user's (first) site's local time."""

    def __init__(self, get_response):
        self.get_response = get_response

    def __call__(self, request):
        tz = None
        user = getattr(request, "user", None)
        if user is not None and user.is_authenticated:
            site = user.sites.order_by("name").only("timezone").first()
            if site is not None:
                tz = site.tzinfo
        if tz is not None:
            timezone.activate(tz)
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

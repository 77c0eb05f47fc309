"""The JSON API (django-ninja). Every operation needs the crew role and sees only the user's sites.

Two ways in: the web app's session (unsafe methods need the CSRF token, as forms do) and per-user
tokens for other programs (`Authorization: Bearer fc_...`, see fleetcare/api/tokens.py).
"""
from django.conf import settings
from django.core.exceptions import RequestDataTooBig
from django.http import HttpRequest
from ninja import NinjaAPI, Query, Schema, Status
from ninja.errors import AuthorizationError, HttpError, ValidationError
from ninja.security import APIKeyCookie, HttpBearer
from ninja.utils import check_csrf

from fleetcare.accounts.roles import CREW, has_role, role_of
from fleetcare.api import schemas, selectors, services
from fleetcare.api.tokens import user_for_secret
from fleetcare.fleet.access import battery_or_404
from fleetcare.planner.selectors import tasks_for_today

LEAST_ROLE = CREW
SAFE_METHODS = ("GET", "HEAD", "OPTIONS")
# Every operation may answer these (a bad query or body, no sign-in, too low a role, not yours, a conflict, values
# the form refuses); documented on each so clients and schema checks know them.
ERRORS = {code: schemas.ErrorOut for code in (400, 401, 403, 404, 409, 422)}


def _with_role(user):
    if user is None:
        return None
    if not has_role(user, LEAST_ROLE):
        raise AuthorizationError(message=f"This needs the {LEAST_ROLE} role.")
    return user


class TokenAuth(HttpBearer):
    """A per-user API token, sent as `Authorization: Bearer fc_...`."""

    def authenticate(self, request, token):
        user = _with_role(user_for_secret(token))
        if user is not None:
            request.user = user
        return user


class SessionAuth(APIKeyCookie):
    """The web app's sign-in. Anonymous requests fall through to 401; unsafe methods need the CSRF token."""

    param_name = settings.SESSION_COOKIE_NAME

    def __call__(self, request: HttpRequest):
        user = getattr(request, "user", None)
        if user is None or not user.is_authenticated:
            return None
        if request.method not in SAFE_METHODS and check_csrf(request) is not None:
            raise HttpError(403, "The form's security token is missing or stale: reload the page and send again.")
        return _with_role(user)

    def authenticate(self, request, key):  # pragma: no cover - __call__ does the work
        return None


api = NinjaAPI(
    title="FleetCare API",
    version="1",
    description=(
        "Batteries, profiles, readings and water top-ups for the sites you belong to. "
        "Sign in with the web app's session (send the CSRF token in X-CSRFToken on POST) or with a personal "
        "token: `Authorization: Bearer fc_...`. Submissions are idempotent by client_uuid: sending the same "
        "submission again stores nothing new and gets the same answer."
    ),
    auth=[TokenAuth(), SessionAuth()],
    urls_namespace="api",
    docs_url=None,
    openapi_url="/openapi.json",
)


def _field_key(loc):
    parts = [str(p) for p in loc]
    if parts and parts[0] in ("body", "query", "path"):
        parts = parts[1:]
    if len(parts) > 1 and parts[0] == "payload":
        parts = parts[1:]
    return ".".join(parts) or "__all__"


@api.exception_handler(ValidationError)
def _invalid(request, exc):
    errors = {}
    for error in exc.errors:
        errors.setdefault(_field_key(error.get("loc", ())), []).append(str(error.get("msg", "Invalid value.")))
    detail = services.NOT_SAVED if request.method not in SAFE_METHODS else (
        "The request's parameters are not valid: fix the ones listed and ask again.")
    return api.create_response(request, {"detail": detail, "errors": errors}, status=422)


@api.exception_handler(RequestDataTooBig)
def _too_big(request, exc):
    limit_mb = settings.DATA_UPLOAD_MAX_MEMORY_SIZE / 1024 / 1024
    return api.create_response(request, {
        "detail": f"Nothing was saved: the request's body is larger than the {limit_mb:.1f} MB accepted.",
        "errors": {"__all__": ["The body is too large."]},
    }, status=400)


class BatteryFilter(Schema):
    site: str | None = None
    include_retired: bool = False


@api.get("/me", response={200: schemas.MeOut, **ERRORS}, url_name="me", summary="Who you are signed in as")
def me(request):
    user = request.auth
    return {"username": user.get_username(), "name": user.get_full_name(), "role": role_of(user),
            "sites": [s["code"] for s in selectors.sites_for(user)]}


@api.get("/sites", response={200: list[schemas.SiteOut], **ERRORS}, url_name="sites", summary="Your sites")
def list_sites(request):
    return selectors.sites_for(request.auth)


@api.get("/batteries", response={200: list[schemas.BatteryOut], **ERRORS}, url_name="batteries",
         summary="Batteries at your sites")
def list_batteries(request, filters: Query[BatteryFilter]):
    """Batteries at your sites, by serial; retired ones only with include_retired=true."""
    return selectors.batteries_for(request.auth, site_code=filters.site, include_retired=filters.include_retired)


@api.get("/profiles", response={200: list[schemas.ProfileOut], **ERRORS}, url_name="profiles",
         summary="Battery profiles in use at your sites")
def list_profiles(request):
    return selectors.profiles_for(request.auth)


@api.get("/batteries/{battery_id}/status", response={200: schemas.StatusOut, **ERRORS},
         url_name="battery_status", summary="A battery's latest state")
def battery_status(request, battery_id: int):
    """Latest state of charge and spread, open findings and the next planned work."""
    return selectors.battery_status(battery_or_404(request.auth, battery_id))


SUBMIT_RESPONSES = {201: None, **ERRORS}


@api.post("/batteries/{battery_id}/inspections",
          response={**SUBMIT_RESPONSES, 201: schemas.InspectionOut}, url_name="submit_inspection",
          summary="Store an inspection (idempotent by client_uuid)")
def submit_inspection(request, battery_id: int, payload: schemas.InspectionIn):
    """Checked exactly as the tablet form checks it; errors come back per field with the form's messages.

    409: the battery was retired, or the client_uuid was used before for another battery's reading or with
    other values (nothing is stored; the same body again answers 201 with the stored reading).
    """
    battery = battery_or_404(request.auth, battery_id)
    status, body = services.submit_inspection(user=request.auth, battery=battery, payload=payload)
    return Status(status, body)


@api.post("/batteries/{battery_id}/top-ups",
          response={**SUBMIT_RESPONSES, 201: schemas.TopUpOut}, url_name="submit_top_up",
          summary="Store a water top-up (idempotent by client_uuid)")
def submit_top_up(request, battery_id: int, payload: schemas.TopUpIn):
    battery = battery_or_404(request.auth, battery_id)
    status, body = services.submit_top_up(user=request.auth, battery=battery, payload=payload)
    return Status(status, body)


@api.get("/tasks/today", response={200: list[schemas.TaskOut], **ERRORS}, url_name="tasks_today",
         summary="Today's tasks at your sites")
def tasks_today(request):
    """Readings, waterings and equalizing charges due today at your sites, overdue first, as planned."""
    return [task.as_dict() for task in tasks_for_today(request.auth)]


@api.get("/offline/pages", response={200: schemas.OfflinePagesOut, **ERRORS}, url_name="offline_pages",
         summary="Pages a tablet keeps for working without a connection")
def offline_pages(request):
    return {"pages": selectors.offline_pages(request.auth), "assets": selectors.offline_assets()}

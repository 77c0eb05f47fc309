"""Every URL × role × own or other site answers the status its rule says.

The URLs come from walking the resolver, so a new view is checked the moment it is wired in:
- a fleetcare view without a rule (role_required or public_view, which set `least_role`) fails;
- anonymous -> 302 to sign-in (the JSON API answers 401 instead); a role below the view's -> 403;
- otherwise 200 for our own site's objects and 404 for another site's (administrators: 200 for both);
- a POST-only view answers GET with 405, and is then checked again with an empty POST (see MALFORMED).
URL kwargs are filled from a small world with one object of each kind per site; a kwarg name not in
KWARG_KINDS (or a `pk` after a word not in PK_NOUNS) fails with a message saying where to add it.
"""
import re
from dataclasses import dataclass

import pytest
from django.urls import URLPattern, URLResolver, get_resolver
from django.utils import timezone

from fleetcare.accounts.roles import ADMINISTRATOR, CREW, MANAGER, RANK, SUPERVISOR, ensure_groups

from .conftest import store_inspection, store_top_up

ROLES = (None, CREW, SUPERVISOR, MANAGER, ADMINISTRATOR)
SKIPPED_PREFIXES = ("admin/",)

# URL kwarg name -> kind of object it names. Add new names here (and a maker in World.make if needed).
KWARG_KINDS = {
    "battery_pk": "battery", "battery_id": "battery",
    "inspection_pk": "inspection", "inspection_id": "inspection",
    "top_up_pk": "top_up", "top_up_id": "top_up",
    "finding_pk": "finding", "finding_id": "finding",
    "code": "site_code", "site": "site_code", "site_code": "site_code",
    "site_pk": "site", "site_id": "site",
    "token": "feed_token",
    "import_id": "csv_import",
    "serial": "battery_serial",
}
# For a bare `pk` or `id`, the path word before it says what it names ("findings/<int:pk>/").
PK_NOUNS = {
    "battery": "battery", "batteries": "battery",
    "inspection": "inspection", "inspections": "inspection",
    "water": "top_up", "top-up": "top_up", "top-ups": "top_up", "top_ups": "top_up", "topups": "top_up",
    "finding": "finding", "findings": "finding",
    "site": "site", "sites": "site",
}
# An empty POST refused as malformed (400/422) before the object was looked up says nothing about the
# site check: it passes for own and other site alike; such views need their own 404 test with a valid body.
MALFORMED = "400/422 (empty body refused before the site check)"
CONVERTER = re.compile(r"<(?:(?P<converter>[^>:]+):)?(?P<name>\w+)>")


@dataclass(frozen=True)
class Route:
    route: str
    name: str
    callback: object

    @property
    def kwargs(self):
        return [m.group("name") for m in CONVERTER.finditer(self.route)]

    @property
    def is_api(self):
        return type(getattr(self.callback, "__self__", None)).__module__.startswith("ninja") or \
            getattr(self.callback, "__module__", "").startswith("ninja")

    def __str__(self):
        return f"{self.name or '(unnamed)'} /{self.route}"


def walk(patterns, prefix="", namespace=""):
    for entry in patterns:
        if isinstance(entry, URLResolver):
            ns = ":".join(filter(None, [namespace, entry.namespace]))
            yield from walk(entry.url_patterns, prefix + str(entry.pattern), ns)
        elif isinstance(entry, URLPattern):
            name = ":".join(filter(None, [namespace, entry.name])) if entry.name else ""
            yield Route(prefix + str(entry.pattern), name, entry.callback)


def is_djangos_own(route):
    """Django's views (sign-out, password change, static files) carry no rule of ours; ours always do."""
    module = getattr(route.callback, "__module__", "") or ""
    return module.startswith("django.") and not hasattr(route.callback, "least_role")


def fleetcare_routes():
    return [
        r for r in walk(get_resolver().url_patterns)
        if not r.route.startswith(SKIPPED_PREFIXES) and not is_djangos_own(r)
    ]


ROUTES = fleetcare_routes()


def kind_of(route, kwarg):
    if kwarg in KWARG_KINDS:
        return KWARG_KINDS[kwarg]
    if kwarg in ("pk", "id"):
        match = next(m for m in CONVERTER.finditer(route.route) if m.group("name") == kwarg)
        word = route.route[:match.start()].rstrip("/").split("/")[-1]
        if word in PK_NOUNS:
            return PK_NOUNS[word]
        pytest.fail(f"{route}: cannot tell what `{kwarg}` names after “{word}/”. Add “{word}” to PK_NOUNS "
                    f"in tests/accounts/test_access_matrix.py.", pytrace=False)
    pytest.fail(f"{route}: unknown URL kwarg `{kwarg}`. Add it to KWARG_KINDS in tests/accounts/test_access_matrix.py "
                f"(and a maker in World.make if it names a new kind of object).", pytrace=False)


class World:
    """One object of each kind at our site ("own") and at someone else's ("other"), made on first use."""

    def __init__(self, battery, other_battery, reader):
        self.batteries = {"own": battery, "other": other_battery}
        self.reader = reader
        self.made = {}

    def value(self, kind, side):
        if (kind, side) not in self.made:
            self.made[kind, side] = self.make(kind, side)
        return self.made[kind, side]

    def make(self, kind, side):
        battery = self.batteries[side]
        if kind == "battery":
            return battery.pk
        if kind == "site":
            return battery.site.pk
        if kind == "site_code":
            return battery.site.code
        if kind == "battery_serial":
            return battery.serial
        if kind == "inspection":
            return store_inspection(battery, self.reader).pk
        if kind == "top_up":
            return store_top_up(battery, self.reader).pk
        if kind == "feed_token":
            from fleetcare.planner.services import site_settings

            return site_settings(battery.site).feed_token
        if kind == "finding":
            from fleetcare.care.models import Finding

            now = timezone.now()
            return Finding.objects.create(battery=battery, kind=Finding.Kind.HIGH_SPREAD, opened_at=now,
                                          last_seen_at=now, summary="made for the access matrix").pk
        if kind == "csv_import":
            from fleetcare.readings.models import CsvImport

            uploader = self.reader if side == "own" else _member_of(battery.site)
            from django.core.files.base import ContentFile

            job = CsvImport.objects.create(uploaded_by=uploader, file_name="readings.csv", state="done",
                                           result={"rows_read": 0, "imported": True})
            job.notes_file.save(f"{job.pk}-notes.csv", ContentFile(b"line,cell,column,kind,message\n"))
            return job.pk
        pytest.fail(f"no maker for objects of kind “{kind}”: add one to World.make.", pytrace=False)

    def path(self, route, side):
        def fill(match):
            return str(self.value(kind_of(route, match.group("name")), side))

        return "/" + CONVERTER.sub(fill, route.route)


def _member_of(site):
    from django.contrib.auth import get_user_model

    user = get_user_model().objects.create(username=f"member-of-{site.code}")
    site.members.add(user)
    return user


@pytest.fixture
def people(django_user_model, site):
    """One user per role, each a member of our site only (no password: the matrix signs in with force_login)."""
    groups = ensure_groups()
    people = {}
    for role in ROLES[1:]:
        user = django_user_model.objects.create(username=f"matrix-{role}")
        user.groups.add(groups[role])
        site.members.add(user)
        people[role] = user
    return people


@pytest.fixture
def world(battery, other_battery, people):
    return World(battery, other_battery, people[CREW])


def expected(route, role, side):
    least = route.callback.least_role
    if least is None:
        return 200
    if role is None:
        return 401 if route.is_api else 302
    if RANK[role] < RANK[least]:
        return 403
    if side == "other" and role != ADMINISTRATOR:
        return 404
    return 200


def outcome(response, route, method):
    """The status as the matrix reads it: a sign-in redirect is 302; any other redirect means the view was reached."""
    status = response.status_code
    if status == 302 and "/accounts/login/" in response.get("Location", ""):
        return 302
    if method == "POST" and status in (200, 201, 204, 302):
        return 200  # an empty POST got through the rule and was judged on its content
    if method == "POST" and status in (400, 422):
        return MALFORMED
    if status == 302:
        return 200  # reached, and sent on (e.g. the planner's home to the user's first site)
    return status


def check(client, route, path, role, people):
    client.logout()
    if role is not None:
        client.force_login(people[role])
    response = client.get(path)
    method = "GET"
    if response.status_code == 405 and "GET" not in response.get("Allow", ""):
        method = "POST"
        response = client.post(path, {})
    return outcome(response, route, method), method


def test_every_view_declares_who_may_use_it():
    missing = [str(r) for r in ROUTES if not hasattr(r.callback, "least_role")]
    assert missing == [], (
        "These views have no access rule: decorate them with fleetcare.accounts.access.role_required(<least role>) "
        "or public_view:\n  " + "\n  ".join(missing)
    )


def test_sign_in_is_reachable_without_an_account(client, db):
    assert client.get("/accounts/login/").status_code == 200


def test_the_walk_finds_views_of_every_app():
    names = {r.name.split(":")[0] for r in ROUTES}
    assert {"dashboard", "fleet", "readings"} <= names
    assert any(r.kwargs for r in ROUTES)


@pytest.mark.parametrize("route", ROUTES, ids=str)
def test_the_route_answers_each_role_as_its_rule_says(client, route, world, people):
    if not hasattr(route.callback, "least_role"):
        pytest.fail(f"{route} has no access rule (role_required or public_view).", pytrace=False)
    sides = ("own", "other") if route.kwargs and route.callback.least_role is not None else ("own",)
    wrong = []
    for side in sides:
        path = world.path(route, side)
        for role in ROLES:
            got, method = check(client, route, path, role, people)
            want = expected(route, role, side)
            if got != want and not (got == MALFORMED and want in (200, 404)):
                wrong.append(f"{role or 'anonymous':>13} {side:>5} {method} {path}: got {got}, expected {want}")
    assert wrong == [], f"{route} (least role {route.callback.least_role}):\n" + "\n".join(wrong)


def _unruled_view(request, thing_pk):
    raise AssertionError("never called")


def test_the_walk_names_a_view_without_a_rule():
    from django.urls import include, path

    patterns = [path("stock/", include(([path("<int:thing_pk>/", _unruled_view, name="thing")], "stock")))]
    found = [r for r in walk(patterns) if not hasattr(r.callback, "least_role")]
    assert [str(r) for r in found] == ["stock:thing /stock/<int:thing_pk>/"]


def test_an_unknown_kwarg_fails_with_where_to_add_it():
    route = Route("stock/<int:thing_pk>/", "stock:thing", _unruled_view)
    with pytest.raises(pytest.fail.Exception, match="unknown URL kwarg `thing_pk`. Add it to KWARG_KINDS"):
        kind_of(route, "thing_pk")


def test_a_bare_pk_is_read_from_the_word_before_it():
    assert kind_of(Route("care/findings/<int:pk>/acknowledge/", "care:acknowledge", _unruled_view), "pk") == "finding"
    assert kind_of(Route("readings/water/<int:pk>/remove/", "readings:remove_top_up", _unruled_view), "pk") == "top_up"

"""Crafted input on every form, every API operation and the CSV import: an answer with a message, never a 500,
and nothing stored when the answer is a refusal.

Every address of the site also takes crafted values in its variable parts (ids out of range, NUL, 3,000
characters). The forms are not listed by hand: each page is fetched as a signed-in administrator (or anonymously for the
sign-in page), its POST forms are read from the HTML, and hypothesis fills their fields with a mix of the page's
own values (so later checks are reached) and crafted ones: absurd dates (year 1, 9999, 2099, offsets, local
times that do not exist), crafted numbers (5,000 digits, NaN, inf, booleans, unicode digits), huge and empty
strings. Bounded (max_examples) so the whole file runs in about a minute.
"""
import datetime as dt
import json
import re
import uuid
from decimal import Decimal
from html.parser import HTMLParser
from urllib.parse import urljoin

import pytest
from django.apps import apps
from django.core.files.uploadedfile import SimpleUploadedFile
from django.db import connection
from django.test import Client
from django.urls import reverse
from django.utils import timezone
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from fleetcare.accounts.models import SignInFailure
from fleetcare.accounts.roles import ADMINISTRATOR
from fleetcare.care.models import Finding
from fleetcare.fleet.models import Battery
from fleetcare.planner.models import EqualizingCharge
from fleetcare.readings.models import Inspection
from tests.accounts.conftest import store_inspection, store_top_up
from tests.conftest import make_user

PASSWORD = "not-a-real-password-1"  # tests/conftest.py make_user

SETTINGS = settings(max_examples=50, deadline=None, derandomize=True,
                    suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow])
PER_PAGE = settings(SETTINGS, max_examples=30)  # eighteen pages and eight lists: fewer examples each

DATES = [
    "0001-01-01T00:00", "0001-01-01T00:00+05:00", "0001-01-01 00:00:00-01:00", "0001-01-01", "9999-12-31T23:59",
    "9999-12-31T23:59:59-05:00", "9999-12-31", "2099-06-01T06:00", "1999-12-31T23:59", "1900-01-01",
    "2026-03-29T01:30",  # does not exist in London (clocks go forward)
    "2026-10-25T01:30",  # happens twice in London
    "2026-03-08T02:30",  # does not exist in Chicago
    "2026-02-30", "2026-11-30T25:61", "0000-00-00", "10000-01-01", "2026-11-30T06:15Z", "2026-11-30T06:15+14:00",
    "-2026-01-01",
]
NUMBERS = [
    "9" * 5000, "1" + "0" * 400, "0." + "0" * 400 + "1", "NaN", "nan", "-nan", "inf", "-inf", "Infinity", "1e400",
    "-1e400", "1e-400", "true", "false", "True", "on", "-1", "-0", "0", "٣", "१२३", "１２３", "1_000", "0x1F",
    "1,5", " 7 ", "-999999999999999999999", "1.2.3", "+5", "٢٬٥",
]
STRINGS = ["", " ", "x" * 20000, "\x00", "a\x00b", "😀", "<b>x</b>", "'; DROP TABLE x; --", "\u202e", "\r\n", "%s%n"]
CRAFTED = st.sampled_from(DATES + NUMBERS + STRINGS) | st.text(max_size=40)

# Rows a refused answer must leave alone: everything our apps keep, except the failed sign-ins (kept on purpose).
KEPT_ON_REFUSAL = {SignInFailure}


def stored_rows():
    """Rows in every table of our apps, in one query (it runs twice per example)."""
    models = [m for m in apps.get_models() if m.__module__.startswith("fleetcare.") and m not in KEPT_ON_REFUSAL]
    tables = [connection.ops.quote_name(m._meta.db_table) for m in models]
    with connection.cursor() as cursor:
        cursor.execute("SELECT " + ", ".join(f"(SELECT COUNT(*) FROM {t})" for t in tables))
        return dict(zip((m._meta.label for m in models), cursor.fetchone()))


class Forms(HTMLParser):
    """The forms of a page: action, method, and each field's name with the values the page offers for it."""

    def __init__(self):
        super().__init__()
        self.forms, self._form, self._select = [], None, None

    def handle_starttag(self, tag, attrs):
        attrs = dict(attrs)
        if tag == "form":
            self._form = {"action": attrs.get("action") or "", "fields": {}, "files": [],
                          "method": (attrs.get("method") or "get").lower()}
            self.forms.append(self._form)
        elif self._form is None:
            return
        elif tag in ("input", "textarea", "select") and attrs.get("name") and attrs["name"] != "csrfmiddlewaretoken":
            if attrs.get("type") == "file":
                self._form["files"].append(attrs["name"])
                return
            values = self._form["fields"].setdefault(attrs["name"], [])
            if tag == "input" and attrs.get("value") is not None:
                values.append(attrs["value"])
            if tag == "select":
                self._select = values
        elif tag == "option" and self._select is not None and attrs.get("value") is not None:
            self._select.append(attrs["value"])

    def handle_endtag(self, tag):
        if tag == "form":
            self._form = None
        elif tag == "select":
            self._select = None


def forms_of(client, url, method="post"):
    response = client.get(url)
    assert response.status_code == 200, url
    parser = Forms()
    parser.feed(response.content.decode())
    for form in parser.forms:
        form["action"] = urljoin(url, form["action"]) if form["action"] else url
    return [form for form in parser.forms  # every page has sign-out
            if form["method"] == method and form["action"] != reverse("logout")]


# Good values for boxes a page leaves empty, so that a form with one crafted field can otherwise pass.
GOOD = [(re.compile(r"^sg_\d+$"), ["1.265", "265"]), (re.compile(r"^volts(_\d+)?$"), ["12.80"]),
        (re.compile(r"temp"), ["25"]), (re.compile(r"^(volume|hours_to_end)$"), ["4"]),
        (re.compile(r"^(reason|comment|note|notes|name)$"), ["typed in the wrong box"]),
        (re.compile(r"^username$"), ["crew1", "admin2"]), (re.compile(r"^(old_)?password$"), [PASSWORD]),
        (re.compile(r"^new_password[12]$"), ["a-new-long-passphrase-7"])]


def own_value(name, offered):
    if "uuid" in name:
        return st.builds(lambda: str(uuid.uuid4()))
    values = [v for v in offered if v] or next((good for pattern, good in GOOD if pattern.search(name)), [""])
    return st.sampled_from(values)


def value_for(data, name, offered):
    """The page's own value (or a fresh UUID), a crafted one, or nothing at all."""
    own = own_value(name, offered)
    return data.draw(st.one_of(own, own, CRAFTED, st.none()), label=name)


def fill(data, fields):
    """Either every field at random, or the page's own values with one to three fields crafted (so the checks
    that run once the other fields are good are reached too)."""
    if data.draw(st.booleans(), label="few crafted") and fields:
        crafted = set(data.draw(st.lists(st.sampled_from(sorted(fields)), min_size=1, max_size=3), label="crafted"))
        post = {name: data.draw(CRAFTED if name in crafted else own_value(name, offered), label=name)
                for name, offered in fields.items()}
    else:
        post = {name: value_for(data, name, offered) for name, offered in fields.items()}
    return {name: value for name, value in post.items() if value is not None}


def refused(response):
    """A refusal: a 4xx, or the form shown again with a message beside a field."""
    if 400 <= response.status_code < 500:
        return True
    if response.status_code != 200 or response.context is None:
        return False
    return any(getattr(form, "errors", None) for form in _forms_in(response.context))


def _forms_in(context):
    contexts = context if isinstance(context, list) else [context]
    for value in (v for c in contexts for v in c.flatten().values()):
        if hasattr(value, "is_bound") and hasattr(value, "errors") and value.is_bound:
            yield value


@pytest.fixture(autouse=True)
def quick_hashing(settings):
    """Sign-in and password change check a password on every example: the default hasher would take minutes."""
    settings.PASSWORD_HASHERS = ["django.contrib.auth.hashers.MD5PasswordHasher"]


@pytest.fixture
def world(django_user_model, site, care_site, battery, sealed_battery, traction_profile, room):
    admin = make_user(django_user_model, "admin2", ADMINISTRATOR, [site, care_site])
    inspection = store_inspection(battery, admin)
    top_up = store_top_up(battery, admin)
    charging = Battery.objects.create(serial="TW-002", profile=traction_profile, site=site, charging_room=room,
                                      in_service_date=dt.date(2024, 1, 15))
    EqualizingCharge.objects.create(battery=charging, by=admin, started_at=timezone.now() - dt.timedelta(hours=1))
    now = timezone.now()
    finding = Finding.objects.create(battery=battery, kind="weak_cell", severity=2, positions=[3], opened_at=now,
                                     last_seen_at=now, summary="cell 3 low")
    client = Client()
    client.force_login(admin)
    return {"admin": admin, "client": client, "battery": battery, "sealed": sealed_battery, "charging": charging,
            "inspection": inspection, "top_up": top_up, "finding": finding, "site": site}


PAGES = {
    "all cells": lambda w: reverse("readings:inspect", args=[w["battery"].pk]),
    "pilot cell": lambda w: reverse("readings:inspect", args=[w["battery"].pk]) + "?scope=pilot",
    "sealed blocks": lambda w: reverse("readings:inspect", args=[w["sealed"].pk]),
    "top-up": lambda w: reverse("readings:top_up", args=[w["battery"].pk]),
    "correction": lambda w: reverse("readings:correct", args=[w["inspection"].pk]),
    "removal": lambda w: reverse("readings:remove", args=[w["inspection"].pk]),
    "top-up removal": lambda w: reverse("readings:remove_top_up", args=[w["top_up"].pk]),
    "equalizing start": lambda w: reverse("planner:equalizing", args=[w["battery"].pk]),
    "equalizing readings and end": lambda w: reverse("planner:equalizing", args=[w["charging"].pk]),
    "today's work": lambda w: reverse("planner:today", args=[w["site"].code]),
    "week plan": lambda w: reverse("planner:plan", args=[w["site"].code]),
    "settings page": lambda w: reverse("dashboard:settings_site", args=[w["site"].code]),
    "budget assumptions": lambda w: reverse("budget:assumptions"),
    "capacity test": lambda w: reverse("budget:capacity_tests"),
    "finding": lambda w: reverse("care:finding", args=[w["finding"].pk]),
    "findings": lambda w: reverse("care:findings"),
    "API tokens": lambda w: reverse("api:tokens"),
    "password change": lambda w: reverse("password_change"),
}


@pytest.mark.parametrize("page", sorted(PAGES))
def test_crafted_input_on_every_form_gets_an_answer_and_a_refusal_stores_nothing(world, page):
    client = world["client"]
    forms = forms_of(client, PAGES[page](world))
    assert forms, f"no form found on the {page} page"

    @PER_PAGE
    @given(data=st.data())
    def post_crafted(data):
        form = data.draw(st.sampled_from(forms), label="form")
        post = fill(data, form["fields"])
        before = stored_rows()
        response = client.post(form["action"], post)
        assert response.status_code < 500
        if refused(response):
            assert stored_rows() == before, (form["action"], post)

    post_crafted()


@SETTINGS
@given(data=st.data())
def test_crafted_sign_in_gets_an_answer(crew, data):
    form = forms_of(Client(), reverse("login"))[0]
    response = Client().post(form["action"], fill(data, form["fields"]),
                             REMOTE_ADDR=data.draw(st.sampled_from(["10.0.0.5", "2001:db8::1"])))
    assert response.status_code in (200, 302)


@pytest.mark.parametrize("page", ["batteries", "budget", "findings", "week plan", "find", "capacity tests",
                                  "battery", "labels", "settings"])
def test_crafted_query_parameters_get_an_answer(world, page):
    """The page's own filter forms (and likely names it does not have), filled with crafted values."""
    client = world["client"]
    url = {"batteries": reverse("fleet:batteries"), "budget": reverse("budget:home"),
           "findings": reverse("care:findings"), "week plan": reverse("planner:plan", args=[world["site"].code]),
           "find": reverse("readings:find"), "capacity tests": reverse("budget:capacity_tests"),
           "battery": reverse("fleet:battery", args=[world["battery"].pk]), "labels": reverse("labels:print"),
           "settings": reverse("dashboard:settings_site", args=[world["site"].code])}[page]
    guessed = {name: [] for name in ["site", "start", "from", "to", "q", "serial", "battery", "kind", "state",
                                     "profile", "year", "scope", "status", "page", "sort", "days", "fy"]}
    targets = [{"action": url, "fields": guessed}] + forms_of(client, url, method="get")

    @PER_PAGE
    @given(data=st.data())
    def ask(data):
        target = data.draw(st.sampled_from(targets), label="form")
        query = fill(data, target["fields"])
        response = client.get(target["action"], query)
        assert response.status_code in (200, 302, 400, 404), (target["action"], query, response.status_code)

    ask()


# --- the API ----------------------------------------------------------------------------------------------------

HUGE = "9" * 5000
json_values = st.one_of(
    st.none(), st.booleans(), st.integers(), st.floats(allow_nan=True, allow_infinity=True),
    st.sampled_from(DATES + NUMBERS + STRINGS), st.just(HUGE), st.lists(st.integers(), max_size=3),
    st.dictionaries(st.text(max_size=5), st.integers(), max_size=2),
)


def good_inspection(battery):
    return {"client_uuid": str(uuid.uuid4()), "situation": "charged", "scope": "all", "taken_at": "2026-11-30T06:15",
            "temp": "25", "cells": [{"position": n, "sg": "1.265"} for n in range(1, battery.profile.positions + 1)]}


def as_json(body):
    """JSON text with raw numbers json.dumps will not write: 5,000 digits (the HUGE marker), NaN and Infinity."""
    return json.dumps(body, allow_nan=True).replace(f'"{HUGE}"', HUGE)


@SETTINGS
@given(data=st.data())
def test_crafted_api_submissions_get_a_4xx_and_store_nothing(world, data):
    client = world["client"]
    battery = data.draw(st.sampled_from([world["battery"], world["sealed"]]), label="battery")
    kind = data.draw(st.sampled_from(["inspections", "top-ups"]), label="kind")
    body = good_inspection(battery) if kind == "inspections" else {
        "client_uuid": str(uuid.uuid4()), "done_at": "2026-11-30T08:00", "volume": "4.8"}
    for key in data.draw(st.lists(st.sampled_from(sorted(body) + ["cells.0.sg", "cells.1.position", "cells.0.volts",
                                                                  "unknown"]), max_size=3), label="changed"):
        value = data.draw(json_values, label=key)
        if key.startswith("cells."):
            _, index, field = key.split(".")
            cells = body.get("cells")
            if isinstance(cells, list) and int(index) < len(cells) and isinstance(cells[int(index)], dict):
                cells[int(index)][field] = value
        else:
            body[key] = value
    raw = data.draw(st.sampled_from(["json", "json", "json", "latin-1", "not json", "empty", "3 MB", "deep"]),
                    label="raw")
    content = {"json": as_json(body).encode(), "latin-1": as_json(body).encode() + b"\xff\xfe caf\xe9",
               "not json": b"{'situation': charged", "empty": b"",
               "3 MB": as_json({**body, "notes": "x" * 3_000_000}).encode(),
               "deep": b"[" * 100_000 + b"]" * 100_000}[raw]
    content_type = data.draw(st.sampled_from(["application/json", "application/json", "text/plain",
                                              "application/x-www-form-urlencoded"]), label="content type")
    battery_id = data.draw(st.sampled_from([str(battery.pk), "0", "-1", HUGE[:30], "x"]), label="battery_id")
    before = stored_rows()
    response = client.post(f"/api/batteries/{battery_id}/{kind}", content, content_type=content_type)
    assert response.status_code < 500, response.content[:300]
    if response.status_code >= 400:
        assert response["Content-Type"].startswith("application/json")
        assert response.json()["detail"]
        assert stored_rows() == before


@SETTINGS
@given(path=st.sampled_from(["/api/me", "/api/sites", "/api/batteries", "/api/profiles", "/api/tasks/today",
                             "/api/offline/pages", "/api/batteries/{id}/status"]),
       battery_id=st.sampled_from(["{own}", "0", "-1", "99999999999999999999999", "1e3", "x"]),
       query=st.dictionaries(st.sampled_from(["site", "include_retired", "page", "limit"]), CRAFTED, max_size=3))
def test_crafted_api_reads_get_an_answer(world, path, battery_id, query):
    battery_id = battery_id.replace("{own}", str(world["battery"].pk))
    response = world["client"].get(path.replace("{id}", battery_id), query)
    assert response.status_code in (200, 404, 422), (path, query, response.content[:300])


# --- the CSV import, through its page ----------------------------------------------------------------------------

CSV_HEADERS = ["serial", "taken_at", "situation", "cell", "sg", "temp", "volts", "level", "temp_unit", "rest_hours"]
csv_cell = st.one_of(st.sampled_from(DATES + NUMBERS + STRINGS[:-1]), st.text(max_size=12).filter(lambda t: "\x00" not in t))


@st.composite
def csv_files(draw):
    header = draw(st.permutations(CSV_HEADERS).map(lambda h: h[: draw(st.integers(4, len(h)))]))
    good = {"serial": "TW-001", "taken_at": "2026-11-30T06:15", "situation": "charged", "sg": "1.265", "temp": "25",
            "volts": "", "level": "ok", "temp_unit": "C", "rest_hours": "2"}
    rows = []
    for cell in range(1, draw(st.integers(1, 26)) + 1):
        row = {**good, "cell": str(cell)}
        for name in draw(st.lists(st.sampled_from(CSV_HEADERS), max_size=2)):
            row[name] = draw(csv_cell)
        rows.append(row)
    lines = [",".join(header)] + [",".join(_csv_field(row.get(name, "")) for name in header) for row in rows]
    return "\r\n".join(lines) + "\r\n"


def _csv_field(value):
    return '"' + value.replace('"', '""') + '"' if any(c in value for c in ',"\r\n') else value


@SETTINGS
@given(text=csv_files(), dry_run=st.booleans(), good_rows_only=st.booleans(),
       encoding=st.sampled_from(["utf-8", "utf-8", "utf-8-sig", "latin-1", "utf-16"]))
def test_crafted_csv_files_get_a_report_and_a_refused_file_stores_nothing(world, text, dry_run, good_rows_only,
                                                                            encoding):
    client = world["client"]
    try:
        content = text.encode(encoding)
    except UnicodeEncodeError:
        content = text.encode("utf-8") + b"\xff"
    post = {"file": SimpleUploadedFile("readings.csv", content, content_type="text/csv")}
    if dry_run:
        post["dry_run"] = "on"
    if good_rows_only:
        post["good_rows_only"] = "on"
    readings_before = Inspection.objects.count()
    response = client.post(reverse("readings:import"), post, follow=True)
    assert response.status_code == 200
    page = response.content.decode()
    if dry_run:
        assert Inspection.objects.count() == readings_before
    elif not good_rows_only and "Nothing was imported" in page:
        assert Inspection.objects.count() == readings_before


# --- every address, with crafted values in its variable parts ------------------------------------------------------

CRAFTED_PARTS = {
    "int": ["0", "9223372036854775808", "9" * 30],
    "str": ["a%00b", "x" * 3000, "%C3%A9t%C3%A9", "..%2F..%2Fetc"],
    "uuid": ["00000000-0000-0000-0000-000000000000", "ffffffff-ffff-ffff-ffff-ffffffffffff"],
}
CRAFTED_PARTS["slug"] = CRAFTED_PARTS["path"] = CRAFTED_PARTS["str"]


def every_route():
    from django.urls import URLPattern, URLResolver, get_resolver

    def walk(patterns, prefix):
        for p in patterns:
            if isinstance(p, URLResolver):
                if "admin" not in str(p.pattern):
                    yield from walk(p.url_patterns, prefix + str(p.pattern))
            elif isinstance(p, URLPattern):
                yield prefix + str(p.pattern)

    return sorted({route for route in walk(get_resolver().url_patterns, "") if "<" in route})


PLACEHOLDER = re.compile(r"<(?:(\w+):)?\w+>")


@pytest.mark.parametrize("route", every_route())
def test_crafted_parts_of_every_address_get_an_answer(world, route):
    """Each variable part in turn takes each crafted value (the others their kind's first), by GET and POST."""
    kinds = [kind or "str" for kind in PLACEHOLDER.findall(route)]
    for index, kind in enumerate(kinds):
        for value in CRAFTED_PARTS[kind]:
            chosen = [value if n == index else CRAFTED_PARTS[k][0] for n, k in enumerate(kinds)]
            path = "/" + PLACEHOLDER.sub(lambda _match, parts=iter(chosen): next(parts), route)
            for method in (world["client"].get, world["client"].post):
                assert method(path).status_code < 500, path[:80]

"""Schemathesis against /api/openapi.json, through the Django WSGI app: every operation answers as its
document says (documented status, content type and body shape) and never with a server error."""
import pytest
import schemathesis
from django.core import signals
from django.db import close_old_connections
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from schemathesis.checks import not_a_server_error
from schemathesis.specs.openapi.checks import (
    content_type_conformance,
    response_schema_conformance,
    status_code_conformance,
)

CHECKS = [not_a_server_error, status_code_conformance, content_type_conformance, response_schema_conformance]
EXAMPLES_PER_OPERATION = 25


@pytest.fixture
def wsgi_app(db):
    """The real WSGI app, kept inside the test's transaction: Django would otherwise close the connection
    after each request (the test client does the same disconnect)."""
    from fleetcare.wsgi import application

    signals.request_started.disconnect(close_old_connections)
    signals.request_finished.disconnect(close_old_connections)
    yield application
    signals.request_started.connect(close_old_connections)
    signals.request_finished.connect(close_old_connections)


@pytest.fixture
def schema(wsgi_app):
    return schemathesis.openapi.from_wsgi("/api/openapi.json", wsgi_app)


def test_the_document_is_public_openapi_3(client):
    document = client.get("/api/openapi.json").json()
    assert document["openapi"].startswith("3.")
    assert "/api/batteries/{battery_id}/inspections" in document["paths"]
    assert set(document["components"]["securitySchemes"]) == {"TokenAuth", "SessionAuth"}


def test_every_operation_keeps_to_its_document(schema, crew_token, battery, sealed_battery, other_battery):
    headers = {"Authorization": f"Bearer {crew_token}"}
    # Real ids half the time, so submissions reach the forms; the rest are whatever the document allows.
    battery_ids = st.sampled_from([battery.pk, sealed_battery.pk, other_battery.pk]) | st.integers(-5, 10**6)
    operations = [result.ok() for result in schema.get_all_operations()]
    assert len(operations) == 9

    for operation in operations:
        @settings(max_examples=EXAMPLES_PER_OPERATION, deadline=None, database=None, derandomize=True,
                  suppress_health_check=list(HealthCheck))
        @given(case=operation.as_strategy(), battery_id=battery_ids)
        def call(case, battery_id):
            if case.path_parameters and "battery_id" in case.path_parameters:
                case.path_parameters["battery_id"] = battery_id
            case.call_and_validate(headers=headers, checks=CHECKS)

        call()


def test_anonymous_calls_keep_to_the_document_too(schema, battery):
    for result in schema.get_all_operations():
        operation = result.ok()

        @settings(max_examples=3, deadline=None, database=None, derandomize=True,
                  suppress_health_check=list(HealthCheck))
        @given(case=operation.as_strategy())
        def call(case):
            response = case.call_and_validate(checks=CHECKS)
            assert response.status_code == 401

        call()


def test_a_valid_reading_and_its_resend_keep_to_the_document(schema, crew_token, battery):
    from tests.api.conftest import reading_body

    operation = schema["/api/batteries/{battery_id}/inspections"]["POST"]
    case = operation.Case(path_parameters={"battery_id": battery.pk}, body=reading_body(),
                          media_type="application/json")
    headers = {"Authorization": f"Bearer {crew_token}"}
    first = case.call_and_validate(headers=headers, checks=CHECKS)
    again = case.call_and_validate(headers=headers, checks=CHECKS)
    assert (first.status_code, again.status_code) == (201, 201)
    assert first.content == again.content

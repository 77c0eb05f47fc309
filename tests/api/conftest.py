"""API test helpers: a token client, a CSRF-enforcing session client and a valid 24-cell reading body."""
import uuid

import pytest
from django.test import Client

from fleetcare.api.tokens import create_token

# Post-charge SGs of a healthy 24-cell tray with one cell 30 points down (invented readings).
TRAY_SG = ["285", "287", "284", "286", "288", "285", "283", "286", "255", "287", "284", "286",
           "285", "288", "284", "286", "287", "285", "284", "286", "285", "287", "283", "286"]


@pytest.fixture
def crew_token(crew):
    _, secret = create_token(crew, "test integration")
    return secret


@pytest.fixture
def token_client(crew_token):
    return Client(HTTP_AUTHORIZATION=f"Bearer {crew_token}")


@pytest.fixture
def csrf_client(crew):
    client = Client(enforce_csrf_checks=True)
    client.force_login(crew)
    return client


def reading_body(**overrides):
    body = {
        "client_uuid": str(uuid.uuid4()),
        "situation": "charged",
        "scope": "all",
        "taken_at": "2026-11-30T07:15",
        "temp": "30",
        "cells": [{"position": i, "sg": sg, "low": i == 9} for i, sg in enumerate(TRAY_SG, start=1)],
    }
    body.update(overrides)
    return body


def post_json(client, url, body):
    return client.post(url, data=body, content_type="application/json")

"""Fixtures for findings tests."""
import datetime as dt

import pytest
from django.utils import timezone

from tests.care.helpers import water


@pytest.fixture
def now():
    return timezone.now().replace(microsecond=0)


@pytest.fixture
def watered(battery, crew, now):
    """The test battery watered two days ago, so the watering rules stay quiet unless a test says otherwise."""
    return water(battery, crew, now - dt.timedelta(days=2), 1200)

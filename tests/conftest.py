"""Test-wide settings knobs, set here rather than sniffed for in the settings module."""
from __future__ import annotations

import pytest
from pytest_django.fixtures import Settings


@pytest.fixture(autouse=True)
def fast_password_hasher(settings: Settings) -> None:
    # The real hasher costs ~0.3 s per password; tests only need passwords to round-trip.
    settings.PASSWORD_HASHERS = ["django.contrib.auth.hashers.MD5PasswordHasher"]

"""Test-wide settings knobs, set here rather than sniffed for in the settings module."""
from __future__ import annotations

from collections.abc import Iterator

import pytest
from django.test import override_settings


@pytest.fixture(autouse=True, scope="session")
def fast_password_hasher(django_test_environment: None) -> Iterator[None]:
    # The real hasher costs ~0.3 s per password; tests only need passwords to round-trip.
    # Session scope, so that it is in force for unittest setUpTestData as well.
    with override_settings(PASSWORD_HASHERS=["django.contrib.auth.hashers.MD5PasswordHasher"]):
        yield

"""Test-wide settings knobs, set here rather than sniffed for in the settings module."""
from __future__ import annotations

import os
from collections.abc import Iterator
from typing import Any

import pytest
from playwright.sync_api import Browser, sync_playwright
from django.db import transaction
from django.test import override_settings

from tests.registry.api_world import World, build_world

CHROMIUM = os.environ.get("CHROMIUM_PATH", "/usr/bin/chromium")
CHROMIUM_FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
                  "--disable-background-networking", "--disable-component-update", "--disable-sync"]


@pytest.fixture(autouse=True, scope="session")
def fast_password_hasher(django_test_environment: None) -> Iterator[None]:
    # The real hasher costs ~0.3 s per password; tests only need passwords to round-trip.
    # Session scope, so that it is in force for unittest setUpTestData as well.
    with override_settings(PASSWORD_HASHERS=["django.contrib.auth.hashers.MD5PasswordHasher"]):
        yield


@pytest.fixture(scope="module")
def api_world(django_db_setup: None, django_db_blocker: Any) -> Iterator[World]:
    """tests.registry.api_world's register, built once per test module (and xdist worker).

    For parametrized tests that each make a request or two: building it per test cost more
    than the tests. It is held in a transaction rolled back after the module's last test;
    each test's own transaction (the ``db`` fixture, which such tests must request) is a
    savepoint inside it, so no test sees another's writes. Its instances are shared: read
    their ids, not their fields after a write.
    """
    with django_db_blocker.unblock(), transaction.atomic():
        yield build_world()
        transaction.set_rollback(True)


@pytest.fixture(scope="module")
def browser() -> Iterator[Browser]:
    """Debian's chromium through Playwright (no browser download), one per test module.

    Playwright's sync API runs an event loop in the test thread while it is open, during which
    Django refuses ORM calls (pytest-django's teardown flush among them) unless
    DJANGO_ALLOW_ASYNC_UNSAFE is set. So it is started per module rather than through
    pytest-playwright's session-wide fixtures, and the variable is set only while it runs: it
    must not leak into the rest of the suite (test_settings runs `check --deploy`, which warns
    about it)."""
    previous = os.environ.get("DJANGO_ALLOW_ASYNC_UNSAFE")
    os.environ["DJANGO_ALLOW_ASYNC_UNSAFE"] = "true"
    try:
        with sync_playwright() as playwright:
            browser = playwright.chromium.launch(executable_path=CHROMIUM, headless=True, args=CHROMIUM_FLAGS)
            yield browser
            browser.close()
    finally:
        if previous is None:
            del os.environ["DJANGO_ALLOW_ASYNC_UNSAFE"]
        else:
            os.environ["DJANGO_ALLOW_ASYNC_UNSAFE"] = previous

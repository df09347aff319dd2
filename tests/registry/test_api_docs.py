"""The interactive API documentation renders in a real browser with no internet access.

Playwright drives Debian's chromium (no browser download), started per module by the
``browser`` fixture of tests/registry/conftest.py, which says why.
"""
from __future__ import annotations

from collections.abc import Iterator
from typing import Any
from urllib.parse import urlsplit

import pytest
from playwright.sync_api import Browser, Page

from tests.registry.browser_watch import watch


pytestmark = [pytest.mark.browser, pytest.mark.django_db(transaction=True)]



@pytest.fixture
def expected_complaints() -> list[str]:
    """Text a test expects in some complaints (each must turn up), in place of none at all."""
    return []


@pytest.fixture
def page(browser: Browser, expected_complaints: list[str]) -> Iterator[Page]:
    """A page that fails the test on a CSP violation, a script error or a console error."""
    complaints: list[str] = []
    context = browser.new_context()
    page = context.new_page()
    watch(page, complaints)
    yield page
    context.close()
    # Closed: every report the page sent has arrived.
    for text in expected_complaints:
        assert any(text in complaint for complaint in complaints), (text, complaints)
    assert [complaint for complaint in complaints
            if not any(text in complaint for text in expected_complaints)] == []


def _offline(page: Page, server: str) -> list[str]:
    """Refuse every request that leaves the test server; return the addresses attempted."""
    outside: list[str] = []
    local = urlsplit(server).netloc

    def route(route: Any) -> None:
        if urlsplit(route.request.url).netloc == local:
            route.continue_()
        else:
            outside.append(route.request.url)
            route.abort()

    page.route("**/*", route)
    return outside


def test_swagger_ui_lists_the_operations_without_any_outside_request(live_server: Any, page: Page) -> None:
    outside = _offline(page, live_server.url)
    failed: list[str] = []
    page.on("requestfailed", lambda request: failed.append(request.url))
    page.goto(f"{live_server.url}/api/v1/docs/")
    page.wait_for_selector(".opblock", timeout=15_000)
    assert page.locator(".opblock").count() >= 60
    assert page.get_by_text("/api/v1/evaluate/").count() >= 1
    assert outside == []
    assert failed == []


def test_redoc_renders_the_schema_offline(live_server: Any, page: Page, expected_complaints: list[str]) -> None:
    outside = _offline(page, live_server.url)
    page.goto(f"{live_server.url}/api/v1/docs/redoc/")
    page.locator("h2", has_text="Evaluate ad-hoc beam parameters").wait_for(timeout=15_000)
    # Redoc's own footer logo is the only outside address its bundle knows; the policy refuses
    # it before it is asked for, and says so. Nothing else may be refused.
    assert outside == []
    expected_complaints.append("https://cdn.redoc.ly/redoc/logo-mini.svg")

"""The interactive API documentation renders in a real browser with no internet access."""
from __future__ import annotations

import os
from typing import Any
from urllib.parse import urlsplit

import pytest

# Playwright's sync API keeps an event loop in the test thread, which makes Django refuse
# ORM calls (including pytest-django's teardown flush) as "async"; the standard switch,
# set for this test process only and never in settings.
os.environ.setdefault("DJANGO_ALLOW_ASYNC_UNSAFE", "true")

CHROMIUM_FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
                  "--disable-background-networking", "--disable-component-update", "--disable-sync"]


@pytest.fixture(scope="session")
def browser_type_launch_args(browser_type_launch_args: dict[str, Any]) -> dict[str, Any]:
    # Debian's chromium, not a browser downloaded by Playwright.
    return {**browser_type_launch_args, "executable_path": os.environ.get("CHROMIUM_PATH", "/usr/bin/chromium"),
            "args": CHROMIUM_FLAGS}


def _offline(page: Any, server: str) -> list[str]:
    """Refuse every request that leaves the test server; return the list of those attempted."""
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


@pytest.mark.browser
@pytest.mark.django_db(transaction=True)
def test_swagger_ui_lists_the_operations_without_any_outside_request(live_server: Any, page: Any) -> None:
    outside = _offline(page, live_server.url)
    failed: list[str] = []
    page.on("requestfailed", lambda request: failed.append(request.url))
    page.goto(f"{live_server.url}/api/v1/docs/")
    page.wait_for_selector(".opblock", timeout=15_000)
    assert page.locator(".opblock").count() >= 60
    assert page.get_by_text("/api/v1/evaluate/").count() >= 1
    assert outside == []
    assert failed == []


@pytest.mark.browser
@pytest.mark.django_db(transaction=True)
def test_redoc_renders_the_schema_offline(live_server: Any, page: Any) -> None:
    outside = _offline(page, live_server.url)
    page.goto(f"{live_server.url}/api/v1/docs/redoc/")
    page.locator("h2", has_text="Evaluate ad-hoc beam parameters").wait_for(timeout=15_000)
    # Redoc's own footer logo is the only outside address its bundle knows.
    assert [url for url in outside if "redoc" not in url] == []

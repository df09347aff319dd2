"""The Content-Security-Policy header: strict on the register's pages and the admin, widened
only where the API's documentation and browsable pages need it, and never for scripts."""
from __future__ import annotations

import pytest
from django.test import Client

from registry.services import person_create

pytestmark = pytest.mark.django_db

STRICT = {
    "default-src": "'self'", "script-src": "'self'", "style-src": "'self'", "img-src": "'self'",
    "font-src": "'self'", "connect-src": "'self'", "object-src": "'none'", "base-uri": "'none'",
    "frame-ancestors": "'none'", "form-action": "'self'",
}


def _policy(client: Client, url: str) -> dict[str, str]:
    response = client.get(url)
    assert response.status_code == 200, url
    return {directive.split(" ", 1)[0]: directive.split(" ", 1)[1]
            for directive in response["Content-Security-Policy"].split("; ")}


@pytest.mark.parametrize("url", ["/login/", "/admin/login/"])
def test_pages_and_admin_get_the_strict_policy(client: Client, url: str) -> None:
    assert _policy(client, url) == STRICT


def test_a_signed_in_page_and_an_admin_page_get_the_strict_policy(client: Client) -> None:
    client.force_login(person_create(username="holloway", role="lso").user)
    assert _policy(client, "/lasers/") == STRICT
    assert _policy(client, "/admin/registry/laser/") == STRICT


@pytest.mark.parametrize(("url", "widened"), [
    ("/api/v1/docs/", {"img-src": "'self' data:"}),
    ("/api/v1/docs/redoc/", {"img-src": "'self' data:", "style-src": "'self' 'unsafe-inline'",
                             "worker-src": "blob:"}),
])
def test_the_docs_widen_only_what_their_bundles_need(client: Client, url: str, widened: dict[str, str]) -> None:
    assert _policy(client, url) == STRICT | widened


def test_swagger_ui_starts_from_a_script_of_its_own_not_an_inline_one(client: Client) -> None:
    page = client.get("/api/v1/docs/").content.decode()
    assert "<script>" not in page and "<style" not in page
    script = client.get("/api/v1/docs/?script=")
    assert script["Content-Type"].startswith("application/javascript")
    assert "SwaggerUIBundle" in script.content.decode()


def test_the_browsable_api_may_use_style_attributes_but_no_inline_script(client: Client) -> None:
    client.force_login(person_create(username="holloway", role="lso").user)
    assert _policy(client, "/api/v1/lasers/?format=api") == STRICT | {"style-src": "'self' 'unsafe-inline'"}
    # The API index is a browsable page too, open before signing in.
    client.logout()
    assert _policy(client, "/api/v1/?format=api") == STRICT | {"style-src": "'self' 'unsafe-inline'"}

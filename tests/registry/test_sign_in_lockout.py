"""Repeated wrong passwords lock an account's password sign-in (django-axes), wherever they
are tried, until the pause ends or `manage.py axes_reset_username` lifts it."""
from __future__ import annotations

from io import StringIO

import pytest
from django.core.cache import cache
from django.core.management import call_command
from django.test import Client
from rest_framework.authtoken.models import Token
from rest_framework.test import APIClient

from registry.services import person_create

pytestmark = pytest.mark.django_db

ADMIN_LOGIN = "/admin/login/"
PASSWORD = "correct horse battery"


@pytest.fixture(autouse=True)
def lso() -> None:
    person_create(username="holloway", role="lso", password=PASSWORD)
    person_create(username="abbott", role="inspector", password="another long phrase")
    # The token sign-in's own throttle keeps its counts in the cache.
    cache.clear()


def _admin_sign_in(username: str, password: str, address: str = "192.0.2.10") -> int:
    response = Client(REMOTE_ADDR=address).post(ADMIN_LOGIN, {"username": username, "password": password,
                                                              "next": "/admin/"})
    return response.status_code


def test_five_wrong_passwords_lock_the_account_even_for_the_right_one() -> None:
    assert [_admin_sign_in("holloway", f"guess {number}", f"192.0.2.{number}") for number in range(4)] == [200] * 4
    # The fifth failure locks; the name counts however it is padded or cased, from any address.
    assert _admin_sign_in(" HOLLOWAY", "guess 5", "198.51.100.7") == 429
    client = Client(REMOTE_ADDR="203.0.113.1")
    locked = client.post(ADMIN_LOGIN, {"username": "holloway", "password": PASSWORD, "next": "/admin/"})
    assert locked.status_code == 429
    assert "Sign-in paused for this account" in locked.content.decode()
    assert "_auth_user_id" not in client.session
    # The register's own sign-in page and the token sign-in are locked as well.
    page = Client().post("/login/", {"username": "holloway", "password": PASSWORD})
    assert page.status_code == 429
    token = APIClient().post("/api/v1/auth/token/", {"username": "holloway", "password": PASSWORD}, format="json")
    assert token.status_code == 400
    assert not Token.objects.exists()
    # Another account from the same address is not.
    assert _admin_sign_in("abbott", "another long phrase", "192.0.2.1") == 302


def test_axes_reset_username_lifts_the_lock() -> None:
    for number in range(5):
        _admin_sign_in("holloway", f"guess {number}")
    assert _admin_sign_in("holloway", PASSWORD) == 429
    out = StringIO()
    call_command("axes_reset_username", "holloway", stdout=out)
    assert "1 attempts removed" in out.getvalue()
    assert _admin_sign_in("holloway", PASSWORD) == 302


def test_a_success_before_the_limit_starts_the_count_again() -> None:
    for number in range(4):
        _admin_sign_in("holloway", f"guess {number}")
    assert _admin_sign_in("holloway", PASSWORD) == 302
    assert [_admin_sign_in("holloway", f"again {number}") for number in range(4)] == [200] * 4
    assert _admin_sign_in("holloway", PASSWORD) == 302

"""Who is signing in, as the guards against password guessing count them.

Two guards count failed sign-ins: the token sign-in's throttles (registry.api.auth) and
django-axes, which locks an account after repeated failures on any page that signs in with
a password (the admin, the register's sign-in page, the token sign-in). Both name the
attempt the same way, here: by the name as an account would be looked up (trimmed and
case-folded, so " ada", "ADA" and "ada\t" are one), and by the connecting address, read
past X-Forwarded-For only as far as REST_FRAMEWORK["NUM_PROXIES"] (BEAMKEEPER_NUM_PROXIES)
says the deployment's own proxies reach.
"""
from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from django.http import HttpRequest
from rest_framework.throttling import BaseThrottle


def attempt_name(username: object) -> str | None:
    """The name an attempt counts against; None when no name was sent."""
    if not isinstance(username, str) or not username.strip():
        return None
    return username.strip().casefold()


def attempt_address(request: HttpRequest) -> str:
    """The client's address (AXES_CLIENT_IP_CALLABLE), as DRF's throttles read it."""
    return BaseThrottle().get_ident(request)  # type: ignore[arg-type]


def axes_username(request: HttpRequest, credentials: Mapping[str, Any] | None) -> str | None:
    """AXES_USERNAME_CALLABLE: the sent name, from the credentials or else the form."""
    username = credentials.get("username") if credentials else request.POST.get("username")
    return attempt_name(username)

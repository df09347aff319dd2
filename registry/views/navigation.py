"""The site's navigation, built from the same policies that guard the pages it links to."""
from __future__ import annotations

from typing import Any

from django.http import HttpRequest
from django.urls import reverse

from registry import permissions
from registry.permissions import person_of

# (label, URL name, policy and action deciding who sees the link; None: everyone signed in)
_LINKS: tuple[tuple[str, str, permissions.Policy | None, str], ...] = (
    ("Home", "home", None, ""),
    ("Register", "register", permissions.LASERS, "list"),
    ("Register a laser", "laser-new", permissions.LASERS, "create"),
    ("Review queue", "review", permissions.LASERS, "approve"),
    ("Rooms", "locations", permissions.LOCATIONS, "list"),
    ("People", "people", permissions.PEOPLE, "list"),
    ("Report an incident", "incident-new", permissions.INCIDENTS, "create"),
)


def navigation(request: HttpRequest) -> dict[str, Any]:
    """Template context: ``navigation`` (label, url, current) for the signed-in person, and ``back_office``."""
    person = person_of(getattr(request, "user", None))
    if person is None:
        return {"navigation": [], "back_office": False, "signed_in": None}
    links = []
    for label, name, policy, action in _LINKS:
        if policy is None or policy.allows(person, action):
            url = reverse(name)
            links.append((label, url, request.path == url))
    return {"navigation": links, "back_office": request.user.is_staff, "signed_in": person}

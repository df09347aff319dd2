"""Who may open a page: the API's policies, applied to the browser.

``page(policy, action)`` sends anonymous visitors to the sign-in page, refuses an account
without a role in the register, and refuses a role the policy's rule for ``action`` does not
list (403). Records are looked up inside the policy's scope (``visible_or_404``), so a record
outside it is "not found", as in the API.
"""
from __future__ import annotations

from collections.abc import Callable
from functools import wraps
from typing import Any, TypeVar

from django.contrib.auth.views import redirect_to_login
from django.core.exceptions import PermissionDenied
from django.db.models import Model, QuerySet
from django.http import HttpRequest, HttpResponse
from django.shortcuts import get_object_or_404

from registry.models import Person
from registry.permissions import Policy, person_of

View = Callable[..., HttpResponse]
ModelT = TypeVar("ModelT", bound=Model)


class PageRequest(HttpRequest):
    """A request ``page`` has let through: ``person`` is the signed-in person."""

    person: Person


def page(policy: Policy | None = None, action: str = "") -> Callable[[View], View]:
    """Open the view to signed-in people whose role ``policy`` allows ``action`` (any role when no policy)."""

    def decorate(view: View) -> View:
        @wraps(view)
        def guarded(request: HttpRequest, *args: Any, **kwargs: Any) -> HttpResponse:
            if not request.user.is_authenticated:
                return redirect_to_login(request.get_full_path())
            person = person_of(request.user)
            if person is None:
                raise PermissionDenied("This account has no role in the register; ask the laser safety officer.")
            if policy is not None and not policy.allows(person, action):
                raise PermissionDenied("Your role does not allow this.")
            request.person = person  # type: ignore[attr-defined]
            return view(request, *args, **kwargs)

        return guarded

    return decorate


def visible_or_404(policy: Policy, person: Person, queryset: QuerySet[ModelT], pk: int) -> ModelT:
    """The record ``pk`` among those ``person`` may see under ``policy``; 404 otherwise."""
    return get_object_or_404(policy.visible(person, queryset), pk=pk)


def require(policy: Policy, action: str, person: Person, record: Model) -> None:
    """Refuse (403) unless ``policy`` lets ``person`` take ``action`` on ``record``."""
    if not policy.allows(person, action, record):
        raise PermissionDenied("Your role does not allow this.")

"""One log line per service action: what was done, by whom, on which record, and how it ended.

Every public write service is decorated with ``service_action``. A service called by another
(``laser_register`` creating its emissions) is part of the outer action's line, not a line of
its own. The line is written whether the action is done, refused (a ValidationError or
PermissionDenied, which the caller answers as 400/403/409) or fails; a failure's traceback is
logged by whoever handles the exception (Django, for a request). The request id comes with
every line (registry.log_context).
"""
from __future__ import annotations

import functools
import logging
import time
from collections.abc import Callable, Mapping
from contextvars import ContextVar
from typing import Any, ParamSpec, TypeVar

from django.core.exceptions import PermissionDenied, ValidationError
from django.db import models

from registry.models import Person

logger = logging.getLogger("registry.services")

P = ParamSpec("P")
R = TypeVar("R")

_INSIDE_ACTION: ContextVar[bool] = ContextVar("inside_service_action", default=False)


def service_action(service: Callable[P, R]) -> Callable[P, R]:
    @functools.wraps(service)
    def logged(*args: P.args, **kwargs: P.kwargs) -> R:
        if _INSIDE_ACTION.get():
            return service(*args, **kwargs)
        token = _INSIDE_ACTION.set(True)
        started = time.perf_counter()
        result: Any = None
        outcome = "failed"
        try:
            result = service(*args, **kwargs)
            outcome = "done"
            return result
        except (ValidationError, PermissionDenied) as error:
            outcome = f"refused ({type(error).__name__})"
            raise
        finally:
            _INSIDE_ACTION.reset(token)
            logger.info("%s by %s%s: %s in %.0f ms", service.__name__, _actor(kwargs), _subject(kwargs, result),
                        outcome, (time.perf_counter() - started) * 1000)
    return logged


def _actor(kwargs: Mapping[str, Any]) -> str:
    """The acting person's username, without a query: services take them as ``by``, loaded with
    their account (permissions.person_of); a command acting for nobody is "system"."""
    person = kwargs.get("by")
    if not isinstance(person, Person):
        return "system"
    if Person.user.is_cached(person):  # type: ignore[attr-defined]
        return str(person.user.get_username())
    return f"person {person.pk}"


def _subject(kwargs: Mapping[str, Any], result: Any) -> str:
    """The record acted on: the one the action returns (a new one, or the one it changed), else the
    first record among the arguments (``laser=``, ``audit=``) that is not the actor. Kind and id
    only, no query."""
    candidates = [result] + [value for name, value in kwargs.items() if name != "by"]
    for value in candidates:
        if isinstance(value, models.Model) and value.pk is not None:
            return f" on {value._meta.model_name} {value.pk}"
    return ""

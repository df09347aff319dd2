"""Errors the services raise for a request the register refuses.

Both are ValidationErrors keyed by the field at fault, so the admin, forms and the API
can show them beside that field; PermissionDenied is raised when the acting person's
role may not do what was asked.
"""
from __future__ import annotations

from collections.abc import Iterable

from django.core.exceptions import ValidationError


class TransitionError(ValidationError):
    """A status change that the record's workflow does not allow."""

    def __init__(self, *, record: object, current: str, target: str, allowed: Iterable[str]) -> None:
        allowed_text = ", ".join(sorted(allowed)) or "none (this status is final)"
        self.current = current
        self.target = target
        super().__init__(
            {"status": f"{record} cannot go from '{current}' to '{target}'; from '{current}' it may go to: "
                       f"{allowed_text}."}
        )


class PrerequisiteError(ValidationError):
    """An approval refused because something it depends on is missing."""

    def __init__(self, *, field: str, missing: list[str]) -> None:
        self.missing = missing
        super().__init__({field: [f"Missing prerequisite: {item}" for item in missing]})


class StateError(ValidationError):
    """A change the record's current state does not allow (an approved SOP, a closed finding)."""

    def __init__(self, *, field: str, message: str) -> None:
        super().__init__({field: message})


class StateConflict(StateError):
    """A step refused because the record's state changed after its caller read it."""

    def __init__(self, *, record: object, field: str, seen: object, now: object) -> None:
        super().__init__(field=field, message=(
            f"{record} changed while this request was being handled: its {field} is now '{now}', not '{seen}'. "
            "Nothing was saved; read it again and decide on what it is now."))

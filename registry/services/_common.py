"""Helpers every service module uses: validated saves, transitions and role checks."""
from __future__ import annotations

from collections.abc import Collection, Mapping
from typing import Any, TypeVar

from django.core.exceptions import PermissionDenied, ValidationError
from django.db import models

from hazards.errors import InputError
from hazards.units import parse_quantity
from registry.models import Person, Role
from registry.services.errors import StateError, TransitionError

ModelT = TypeVar("ModelT", bound=models.Model)


def validated_save(instance: ModelT, *, by: Person | None) -> ModelT:
    """full_clean() (fields and Meta.constraints) then save(), recording ``by`` in the history."""
    instance.full_clean()
    if by is not None:
        # simple-history reads this attribute for the history row's user.
        instance._history_user = by.user  # type: ignore[attr-defined]
    instance.save()
    return instance


def lock(record: ModelT, *fields: str) -> ModelT:
    """Lock ``record``'s row until the transaction ends and re-read ``fields`` (its state), so
    that a workflow step checks the state no concurrent step can change under it."""
    type(record)._default_manager.select_for_update().filter(pk=record.pk).first()
    record.refresh_from_db(fields=list(fields))
    return record


def require_transition(record: models.Model, *, current: str, target: str,
                       allowed: Mapping[str, frozenset[str]]) -> None:
    if target not in allowed.get(current, frozenset()):
        raise TransitionError(record=record, current=current, target=target, allowed=allowed.get(current, ()))


def require_role(by: Person, *roles: Role, action: str) -> None:
    if by.role not in roles:
        wanted = " or ".join(str(role.label) for role in roles)
        raise PermissionDenied(f"Only a {wanted} may {action}; {by} is a {by.get_role_display()}.")


def require_text(value: str, *, field: str, what: str) -> str:
    text = value.strip()
    if not text:
        raise ValidationError({field: f"{what} is required."})
    return text


def quantity(value: object, *, field: str, unit: str, **limits: float | bool | None) -> float | None:
    """A number in ``unit`` or a string with units, as an SI float; None stays None.

    The unit parser's InputError becomes a ValidationError keyed by ``field``.
    """
    if value is None or value == "":
        return None
    try:
        return parse_quantity(value, field=field, unit=unit, **limits)  # type: ignore[arg-type]
    except InputError as error:
        raise ValidationError({field: error.message}) from None


def apply_changes(record: models.Model, changes: Mapping[str, Any], *, editable: Collection[str], what: str,
                  many_to_many: Collection[str] = ()) -> None:
    """Set ``changes`` on ``record`` (not saved), refusing any field outside ``editable``.

    Fields named in ``many_to_many`` are checked but not set: they need a saved record.

    Status fields are never editable: status changes go through the workflow services.
    A retired compliance record keeps what it said when it was retired.
    """
    refused = sorted(set(changes) - set(editable))
    if refused:
        raise ValidationError({name: f"{name} is not a field of {what} that can be changed here." for name in refused})
    if getattr(record, "retired_at", None) is not None:
        raise StateError(field="retired_at", message=f"{record} is retired; a retired record is not changed.")
    for name, value in changes.items():
        if name not in many_to_many:
            setattr(record, name, value)


def save_changes(record: ModelT, changes: Mapping[str, Any], *, editable: Collection[str], what: str,
                 by: Person | None) -> ModelT:
    """apply_changes and validated_save; many-to-many fields in ``changes`` are set after the save."""
    many = {field.name for field in record._meta.many_to_many} & set(changes)
    apply_changes(record, changes, editable=editable, what=what, many_to_many=many)
    validated_save(record, by=by)
    for name in many:
        getattr(record, name).set(list(changes[name]))
    return record

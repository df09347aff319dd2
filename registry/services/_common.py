"""Helpers every service module uses: locked changes, validated saves, transitions and role checks.

Every write to an existing record goes the same way: ``lock_for_change`` inside the
service's transaction, the checks and changes, then ``validated_save``. So no two writers
interleave on one record, each decides on the record as it is (not as its caller once read
it), and each writes back only the columns it changed: a workflow step and a field update
sent at the same moment can neither undo each other nor both act on a state only one saw.
"""
from __future__ import annotations

import copy
from collections.abc import Collection, Mapping
from typing import Any, TypeVar

from django.core.exceptions import PermissionDenied, ValidationError
from django.db import models, transaction
from django.db.models.fields.files import FieldFile

from hazards.errors import InputError
from hazards.units import parse_quantity
from registry.models import RETIRED_STATUSES, SOP, Authorization, Emission, Laser, Person, Role
from registry.models.base import ComplianceRecord
from registry.services.errors import StateConflict, StateError, TransitionError

ModelT = TypeVar("ModelT", bound=models.Model)

# The columns that hold a record's place in its workflow; a step decides on them.
STATE_FIELDS = ("status", "retired_at")

# Records that belong to a laser: read-only once it is disposed of or transferred, and locked
# after it (a laser's row first, then its part's), so that two steps on one laser never wait
# for each other in opposite orders.
LASER_PARTS: tuple[type[models.Model], ...] = (Emission, SOP, Authorization)

# Where lock_for_change keeps the columns as it read them, for validated_save to compare.
_LOCKED = "_locked_columns"


def lock_for_change(record: ModelT, *, bookkeeping: bool = False) -> ModelT:
    """Lock ``record``'s row until the transaction ends and reload the record from it.

    Call it first thing in a service that changes an existing record (inside
    transaction.atomic): the checks that follow then see the row as it is, no other writer
    can change it before the transaction ends, and validated_save writes back only the
    columns the service changed. Refused with StateError (409) when the record is read-only
    (refuse_if_read_only), or when its state (STATE_FIELDS) in the row differs from the
    caller's copy: another step moved it after the caller read it, and this one is not taken
    on a state its caller never saw (StateConflict). ``bookkeeping`` lets a step mark a
    retired record as what it has become (an approved SOP superseded by the next version),
    which changes no content anyone relies on.
    """
    locked = getattr(record, _LOCKED, None)
    if locked is not None and locked != _columns(record):
        # Reloading would drop those changes without a word.
        raise RuntimeError(f"{record!r} was changed after it was locked; lock a record before changing it.")
    lock_for_decision(record, bookkeeping=bookkeeping)
    setattr(record, _LOCKED, _columns(record))
    return record


def lock_for_decision(record: ModelT, *, bookkeeping: bool = False, field: str | None = None) -> ModelT:
    """Lock and reload a row a step decides on without changing it (the audit a finding is
    raised in, the laser a new emission is added to), with lock_for_change's refusals;
    ``field`` names the input a read-only refusal is about (the new emission's "laser")."""
    if not transaction.get_connection().in_atomic_block:
        raise transaction.TransactionManagementError("Rows are locked inside transaction.atomic.")
    seen = {name: getattr(record, name) for name in _state_fields(record)}
    laser = None
    if isinstance(record, LASER_PARTS):
        laser = Laser._base_manager.select_for_update().get(pk=record.laser_id)  # type: ignore[attr-defined]
    record.refresh_from_db(from_queryset=type(record)._base_manager.select_for_update())
    if laser is not None:
        record.laser = laser  # type: ignore[attr-defined]
    for name, value in seen.items():
        if getattr(record, name) != value:
            raise StateConflict(record=record, field=name, seen=value, now=getattr(record, name))
    if not bookkeeping:
        refuse_if_read_only(record, field=field)
    return record


def refuse_if_read_only(record: models.Model, *, field: str | None = None) -> None:
    """Retired records are read-only: the one rule, for every way in.

    StateError (409) naming why, when ``record`` is a retired compliance record, a disposed
    or transferred laser, or an emission, SOP or authorization of one. The services reach
    it through lock_for_change and lock_for_decision (every change of an existing record,
    and the laser anything new is added to); the admin's forms (RegisterForm) call it too. The
    refusal is keyed by ``field`` if given, else by the field that makes the record read-only.
    """
    if isinstance(record, ComplianceRecord) and record.retired_at is not None:
        raise StateError(field=field or "retired_at", message=(
            f"{record} was retired on {record.retired_at:%Y-%m-%d}; a retired record is read-only."))
    laser = record if isinstance(record, Laser) else getattr(record, "laser", None) if isinstance(
        record, LASER_PARTS) else None
    if laser is not None and laser.status in RETIRED_STATUSES:
        raise StateError(field=field or ("status" if laser is record else "laser"), message=(
            f"{laser.asset_tag} is {laser.get_status_display()}: a disposed or transferred laser and its "
            "emissions, SOPs and authorizations are read-only."))


def _state_fields(record: models.Model) -> list[str]:
    return [field.attname for field in record._meta.concrete_fields if field.name in STATE_FIELDS]


def _columns(record: models.Model) -> dict[str, Any]:
    """Each column's value as saving would write it; a file not yet stored counts as no value."""
    values: dict[str, Any] = {}
    for field in record._meta.concrete_fields:
        value = getattr(record, field.attname)
        if isinstance(value, FieldFile):
            value = value.name if value._committed else object()
        values[field.attname] = copy.deepcopy(value)
    return values


def validated_save(instance: ModelT, *, by: Person | None, validate_constraints: bool = True) -> ModelT:
    """full_clean() (fields and Meta.constraints) then save(), recording ``by`` in the history.

    A record locked by lock_for_change is saved with only the columns that changed since
    (and the auto_now timestamp), so a concurrent writer's other columns stay as it left them.
    ``validate_constraints=False`` is for derived rows written in bulk (hazard results): the
    database still enforces every named constraint, but checking each one in Python first costs a
    query per constraint per row, which turns a register's recompute from seconds into minutes.
    """
    # Taken first: whether the save succeeds or not, the lock's copy is spent, and a later
    # service given this instance locks and reloads it afresh.
    locked = instance.__dict__.pop(_LOCKED, None)
    instance.full_clean(validate_constraints=validate_constraints)
    if by is not None:
        # simple-history reads this attribute for the history row's user.
        instance._history_user = by.user  # type: ignore[attr-defined]
    if locked is None:
        instance.save()
        return instance
    now = _columns(instance)
    changed = [field.name for field in instance._meta.concrete_fields
               if now[field.attname] != locked[field.attname] or getattr(field, "auto_now", False)]
    instance.save(update_fields=changed)
    return instance


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
    The record has been locked (lock_for_change), which refuses a retired one.
    """
    if not hasattr(record, _LOCKED):
        raise RuntimeError(f"{record!r} is changed without lock_for_change.")
    refused = sorted(set(changes) - set(editable))
    if refused:
        raise ValidationError({name: f"{name} is not a field of {what} that can be changed here." for name in refused})
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

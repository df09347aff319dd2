"""Writes for lasers and their emissions: registration, review and the status workflow."""
from __future__ import annotations

import datetime
from collections.abc import Mapping, Sequence
from typing import Any

from django.core.exceptions import ValidationError
from django.db import transaction
from django.utils import timezone

from hazards.assessment import beam_fields
from registry.models import (
    EMISSION_BEAM_FIELDS,
    AuthorizationStatus,
    RETIRED_STATUSES,
    Emission,
    Laser,
    LaserStatus,
    Person,
    Role,
    class_rank,
)
from registry.selectors import emissions_not_assessed
from registry.services._logging import service_action
from registry.services.authorizations import authorization_refuse, authorization_revoke
from registry.services.errors import PrerequisiteError
from registry.services.hazards import hazard_results_refresh
from registry.services.standings import room_standings_batch, room_standings_refresh
from registry.services._common import (
    lock_for_change,
    lock_for_decision,
    quantity,
    require_role,
    require_text,
    require_transition,
    validated_save,
)

S = LaserStatus

# The laser workflow. Review: pending review -> active, or returned to the owner who fixes
# and resubmits. In service: active, in storage and out of service move freely among
# themselves. Disposed and transferred are final.
LASER_TRANSITIONS: dict[str, frozenset[str]] = {
    S.PENDING_REVIEW: frozenset({S.ACTIVE, S.RETURNED}),
    S.RETURNED: frozenset({S.PENDING_REVIEW}),
    S.ACTIVE: frozenset({S.IN_STORAGE, S.OUT_OF_SERVICE, S.DISPOSED, S.TRANSFERRED}),
    S.IN_STORAGE: frozenset({S.ACTIVE, S.OUT_OF_SERVICE, S.DISPOSED, S.TRANSFERRED}),
    S.OUT_OF_SERVICE: frozenset({S.ACTIVE, S.IN_STORAGE, S.DISPOSED, S.TRANSFERRED}),
    S.DISPOSED: frozenset(),
    S.TRANSFERRED: frozenset(),
}

# Statuses a laser reaches only once an LSO has approved its registration.
APPROVED_STATUSES = frozenset({S.ACTIVE, S.IN_STORAGE, S.OUT_OF_SERVICE})

# Fields a laser's editors may change directly; status, review comments and retirement
# dates change only through the workflow services below.
LASER_EDITABLE_FIELDS = frozenset({
    "manufacturer", "model_name", "serial_number", "laser_type", "gain_medium", "labelled_class",
    "embedded_class", "owner", "location", "description", "received_on", "commissioned_on",
})

# Emission inputs that are physical quantities (SI units), and the engine's name for each: its
# unit and bounds come from hazards.assessment.beam_fields, its rules from Emission.clean().
ENGINE_NAMES = {field: name for name, field in EMISSION_BEAM_FIELDS.items()}
# field -> the SI unit it is stored in (fibre_na is a plain number, set as other fields are)
EMISSION_QUANTITIES = {field: beam_fields()[name].unit for field, name in ENGINE_NAMES.items() if field != "fibre_na"}
EMISSION_OTHER_FIELDS = frozenset({"label", "temporal_mode", "diameter_definition", "fibre_na", "notes"})


def _check_fields(given: dict[str, Any], allowed: frozenset[str], *, what: str) -> None:
    unknown = sorted(set(given) - allowed)
    if unknown:
        raise ValidationError({name: f"{name} is not a field of {what} that can be set here." for name in unknown})


@service_action
@transaction.atomic
def laser_register(*, by: Person, asset_tag: str, emissions: Sequence[Mapping[str, Any]] = (),
                   **fields: Any) -> Laser:
    """A new laser, pending review by an LSO, with its ``emissions`` (emission_create's fields
    each) if given; all or nothing. ``fields`` are LASER_EDITABLE_FIELDS. A researcher registers
    in their own name: the owner is the researcher."""
    _check_fields(fields, LASER_EDITABLE_FIELDS, what="a laser")
    if by.role != Role.LSO:
        if fields.get("owner") not in (None, by):
            raise ValidationError({"owner": "You can only name yourself as the owner; ask the LSO to reassign."})
        fields["owner"] = by
    with room_standings_batch():
        laser = validated_save(Laser(asset_tag=asset_tag, status=LaserStatus.PENDING_REVIEW, **fields), by=by)
        for values in emissions:
            emission_create(laser=laser, by=by, **values)
        room_standings_refresh(locations=[laser.location_id])
    return laser


@service_action
@transaction.atomic
def laser_update(*, laser: Laser, by: Person, **fields: Any) -> Laser:
    """Change LASER_EDITABLE_FIELDS. An approved laser whose class anyone but the LSO lowers
    goes back to pending review: the approval was given for the class it had."""
    _check_fields(fields, LASER_EDITABLE_FIELDS, what="a laser")
    lock_for_change(laser)
    before = (laser.labelled_class, laser.effective_class)
    room_before = laser.location_id
    for name, value in fields.items():
        setattr(laser, name, value)
    if not by.is_lso and laser.status in APPROVED_STATUSES and _lowered(before, laser):
        laser.status = LaserStatus.PENDING_REVIEW
        laser.status_note = (f"Back to review: {by} lowered the class from {_classes(*before)} to "
                             f"{_classes(laser.labelled_class, laser.effective_class)}; the LSO confirms a lower "
                             "class before the laser is in service again.")
    with room_standings_batch():
        validated_save(laser, by=by)
        if laser.location_id != room_before:
            room_standings_refresh(locations=[room_before, laser.location_id])
        if {"labelled_class", "embedded_class"} & set(fields):
            # The class enters the assessment (its plausibility check), so the results follow it.
            hazard_results_refresh(emissions=laser.emissions.select_related("laser"), by=by)
    return laser


def _lowered(before: tuple[str, str], laser: Laser) -> bool:
    labelled, effective = before
    return (class_rank(laser.labelled_class) < class_rank(labelled)
            or class_rank(laser.effective_class) < class_rank(effective))


def _classes(labelled: str, effective: str) -> str:
    return labelled if labelled == effective else f"{labelled} (embedded {effective})"


def _move(laser: Laser, target: str, *, by: Person, note: str = "") -> Laser:
    """A status change of a laser locked by lock_for_change."""
    require_transition(laser, current=laser.status, target=target, allowed=LASER_TRANSITIONS)
    laser.status = target
    laser.status_note = note
    return validated_save(laser, by=by)


@service_action
@transaction.atomic
def laser_submit(*, laser: Laser, by: Person, note: str = "") -> Laser:
    """Resubmit a returned registration for review."""
    lock_for_change(laser)
    return _move(laser, LaserStatus.PENDING_REVIEW, by=by, note=note)


@service_action
@transaction.atomic
def laser_approve(*, laser: Laser, by: Person, note: str = "") -> Laser:
    """Accept a registration after review. The laser must describe at least one emission, and
    for a class 3B or 4 laser (labelled or embedded) the engine must have assessed every one:
    the review rests on those figures."""
    require_role(by, Role.LSO, action="approve a laser")
    lock_for_change(laser)
    require_transition(laser, current=laser.status, target=LaserStatus.ACTIVE, allowed=LASER_TRANSITIONS)
    emissions = list(laser.emissions.select_related("laser"))
    if not emissions:
        raise ValidationError({"emissions": f"{laser.asset_tag} has no emission; add its beam parameters first."})
    if laser.is_hazardous:
        hazard_results_refresh(emissions=emissions, by=by, only_stale=True)
        unassessed = emissions_not_assessed(laser=laser)
        if unassessed:
            raise PrerequisiteError(field="emissions", missing=[f"a hazard assessment of {item}" for item in unassessed])
    laser.review_comments = ""
    return _move(laser, LaserStatus.ACTIVE, by=by, note=note)


@service_action
@transaction.atomic
def laser_return(*, laser: Laser, by: Person, comments: str) -> Laser:
    """Send a registration back to its owner with what must change."""
    require_role(by, Role.LSO, action="return a laser registration")
    text = require_text(comments, field="review_comments", what="A comment for the owner")
    lock_for_change(laser)
    require_transition(laser, current=laser.status, target=LaserStatus.RETURNED, allowed=LASER_TRANSITIONS)
    laser.review_comments = text
    return _move(laser, LaserStatus.RETURNED, by=by)


@service_action
@transaction.atomic
def laser_set_status(*, laser: Laser, by: Person, status: str, note: str = "") -> Laser:
    """Move a laser in service between active, in storage and out of service."""
    if status in RETIRED_STATUSES:
        raise ValidationError({"status": "Use laser_retire to dispose of or transfer a laser."})
    if status in (LaserStatus.PENDING_REVIEW, LaserStatus.RETURNED):
        raise ValidationError({"status": "Review statuses are set by laser_submit, laser_approve and laser_return."})
    lock_for_change(laser)
    return _move(laser, status, by=by, note=note)


@service_action
@transaction.atomic
def laser_retire(*, laser: Laser, by: Person, status: str, reason: str,
                 retired_on: datetime.date | None = None) -> Laser:
    """Dispose of or transfer a laser; the record and its history stay in the register.

    Nobody stays authorized on a laser that has left: its approved authorizations are revoked and
    its pending requests refused, each with the reason, in the same transaction (afterwards the
    laser and its authorizations are read-only).
    """
    require_role(by, Role.LSO, action="retire a laser")
    if status not in RETIRED_STATUSES:
        raise ValidationError({"status": f"A laser retires as {' or '.join(RETIRED_STATUSES)}, not '{status}'."})
    note = require_text(reason, field="status_note", what="A reason")
    lock_for_change(laser)
    require_transition(laser, current=laser.status, target=status, allowed=LASER_TRANSITIONS)
    why = f"{laser.asset_tag} was {LaserStatus(status).label}: {note}"
    for authorization in laser.authorizations.filter(retired_at__isnull=True, status__in=(
            AuthorizationStatus.APPROVED, AuthorizationStatus.REQUESTED)):
        close = authorization_revoke if authorization.status == AuthorizationStatus.APPROVED else authorization_refuse
        close(authorization=authorization, by=by, reason=why)
    laser.retired_on = retired_on or timezone.localdate()
    _move(laser, status, by=by, note=note)
    room_standings_refresh(locations=[laser.location_id])  # it is no longer in the register's care
    return laser


def emission_values(**fields: Any) -> dict[str, Any]:
    """Emission field values with every quantity converted to its SI float.

    Quantities may be SI numbers or strings with units; a bad one raises a ValidationError
    keyed by its field name.
    """
    _check_fields(fields, frozenset(EMISSION_QUANTITIES) | EMISSION_OTHER_FIELDS, what="an emission")
    values: dict[str, Any] = {}
    specs = beam_fields()
    for name, value in fields.items():
        if name in EMISSION_QUANTITIES:
            spec = specs[ENGINE_NAMES[name]]
            value = quantity(value, field=name, unit=spec.unit, minimum=spec.minimum, maximum=spec.maximum,
                             inclusive_minimum=spec.inclusive_minimum)
            if name == "source_size_rad" and value is None:
                value = 0.0
        values[name] = value
    return values


def _apply_emission_fields(emission: Emission, fields: dict[str, Any]) -> None:
    for name, value in emission_values(**fields).items():
        setattr(emission, name, value)


@service_action
@transaction.atomic
def emission_create(*, laser: Laser, by: Person | None, **fields: Any) -> Emission:
    """Add an emission and assess it. Quantities are SI numbers or strings with units
    ("532 nm", "5 mW"). An emission the engine cannot assess yet is saved without results."""
    # The laser is locked while the emission joins it, so it cannot retire meanwhile.
    emission = Emission(laser=lock_for_decision(laser, field="laser"))
    _apply_emission_fields(emission, fields)
    validated_save(emission, by=by)
    hazard_results_refresh(emissions=[emission], by=by)
    return emission


@service_action
@transaction.atomic
def emission_update(*, emission: Emission, by: Person | None, **fields: Any) -> Emission:
    """Change an emission; its hazard results are recomputed (or dropped if it cannot be assessed)."""
    lock_for_change(emission)
    _apply_emission_fields(emission, fields)
    validated_save(emission, by=by)
    hazard_results_refresh(emissions=[emission], by=by)
    return emission

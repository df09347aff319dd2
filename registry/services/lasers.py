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
    HAZARDOUS_CLASSES,
    RETIRED_STATUSES,
    Emission,
    Laser,
    LaserStatus,
    Person,
    Role,
)
from registry.services.hazards import hazard_results_refresh
from registry.services._common import quantity, require_role, require_text, require_transition, validated_save
from registry.services.errors import PrerequisiteError, StateError

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
    laser = validated_save(Laser(asset_tag=asset_tag, status=LaserStatus.PENDING_REVIEW, **fields), by=by)
    for values in emissions:
        emission_create(laser=laser, by=by, **values)
    return laser


def require_in_care(laser: Laser) -> None:
    """Refuse a change to a disposed or transferred laser: it keeps what it said when it left."""
    if laser.status in RETIRED_STATUSES:
        raise StateError(field="status", message=(
            f"{laser.asset_tag} is {laser.get_status_display()}; a retired laser and its emissions are not changed."))


@transaction.atomic
def laser_update(*, laser: Laser, by: Person, **fields: Any) -> Laser:
    _check_fields(fields, LASER_EDITABLE_FIELDS, what="a laser")
    require_in_care(laser)
    for name, value in fields.items():
        setattr(laser, name, value)
    validated_save(laser, by=by)
    if {"labelled_class", "embedded_class"} & set(fields):
        # The class enters the assessment (its plausibility check), so the results follow it.
        hazard_results_refresh(emissions=laser.emissions.select_related("laser"), by=by)
    return laser


def _locked(laser: Laser) -> Laser:
    """``laser`` read again with its row locked until the transaction ends, so that a workflow
    step checks the status as it is now, not as the caller last read it (two LSOs at once)."""
    return Laser.objects.select_for_update().get(pk=laser.pk)


def _move(laser: Laser, target: str, *, by: Person, note: str = "") -> Laser:
    require_transition(laser, current=laser.status, target=target, allowed=LASER_TRANSITIONS)
    laser.status = target
    laser.status_note = note
    return validated_save(laser, by=by)


@transaction.atomic
def laser_submit(*, laser: Laser, by: Person, note: str = "") -> Laser:
    """Resubmit a returned registration for review."""
    laser = _locked(laser)
    return _move(laser, LaserStatus.PENDING_REVIEW, by=by, note=note)


@transaction.atomic
def laser_approve(*, laser: Laser, by: Person, note: str = "") -> Laser:
    """Accept a registration after review; the laser must describe at least one emission."""
    require_role(by, Role.LSO, action="approve a laser")
    laser = _locked(laser)
    require_transition(laser, current=laser.status, target=LaserStatus.ACTIVE, allowed=LASER_TRANSITIONS)
    if not laser.emissions.exists():
        raise ValidationError({"emissions": f"{laser.asset_tag} has no emission; add its beam parameters first."})
    if laser.labelled_class in HAZARDOUS_CLASSES or laser.embedded_class in HAZARDOUS_CLASSES:
        # The review approves a hazard evaluation: a class 3B or 4 beam without one is not approved.
        unassessed = [f"{emission} has no hazard assessment: {emission.assessment_problem or 'not assessed yet'}"
                      for emission in laser.emissions.select_related("laser").filter(hazard_results__isnull=True)]
        if unassessed:
            raise PrerequisiteError(field="emissions", missing=unassessed)
    laser.review_comments = ""
    return _move(laser, LaserStatus.ACTIVE, by=by, note=note)


@transaction.atomic
def laser_return(*, laser: Laser, by: Person, comments: str) -> Laser:
    """Send a registration back to its owner with what must change."""
    require_role(by, Role.LSO, action="return a laser registration")
    laser = _locked(laser)
    laser.review_comments = require_text(comments, field="review_comments", what="A comment for the owner")
    return _move(laser, LaserStatus.RETURNED, by=by)


@transaction.atomic
def laser_set_status(*, laser: Laser, by: Person, status: str, note: str = "") -> Laser:
    """Move a laser in service between active, in storage and out of service."""
    if status in RETIRED_STATUSES:
        raise ValidationError({"status": "Use laser_retire to dispose of or transfer a laser."})
    if status in (LaserStatus.PENDING_REVIEW, LaserStatus.RETURNED):
        raise ValidationError({"status": "Review statuses are set by laser_submit, laser_approve and laser_return."})
    return _move(laser, status, by=by, note=note)


@transaction.atomic
def laser_retire(*, laser: Laser, by: Person, status: str, reason: str,
                 retired_on: datetime.date | None = None) -> Laser:
    """Dispose of or transfer a laser; the record and its history stay in the register."""
    require_role(by, Role.LSO, action="retire a laser")
    if status not in RETIRED_STATUSES:
        raise ValidationError({"status": f"A laser retires as {' or '.join(RETIRED_STATUSES)}, not '{status}'."})
    require_transition(laser, current=laser.status, target=status, allowed=LASER_TRANSITIONS)
    laser.retired_on = retired_on or timezone.localdate()
    return _move(laser, status, by=by, note=require_text(reason, field="status_note", what="A reason"))


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


@transaction.atomic
def emission_create(*, laser: Laser, by: Person | None, **fields: Any) -> Emission:
    """Add an emission and assess it. Quantities are SI numbers or strings with units
    ("532 nm", "5 mW"). An emission the engine cannot assess yet is saved without results."""
    require_in_care(laser)
    emission = Emission(laser=laser)
    _apply_emission_fields(emission, fields)
    validated_save(emission, by=by)
    hazard_results_refresh(emissions=[emission], by=by)
    return emission


@transaction.atomic
def emission_update(*, emission: Emission, by: Person | None, **fields: Any) -> Emission:
    """Change an emission; its hazard results are recomputed (or dropped if it cannot be assessed)."""
    require_in_care(emission.laser)
    _apply_emission_fields(emission, fields)
    validated_save(emission, by=by)
    hazard_results_refresh(emissions=[emission], by=by)
    return emission

"""Writes for SOPs: drafting a version, approving it, acknowledging it."""
from __future__ import annotations

import datetime
from typing import Any

from django.core.exceptions import ValidationError
from django.core.files.base import File
from django.db import transaction
from django.db.models import Max
from django.utils import timezone

from registry.models import SOP, Laser, Person, Role, SOPAcknowledgement, SOPStatus
from registry.services._common import (
    lock_for_change,
    lock_for_decision,
    require_role,
    require_transition,
    save_changes,
    validated_save,
)
from registry.services._logging import service_action
from registry.services.errors import StateError

SOP_TRANSITIONS: dict[str, frozenset[str]] = {
    SOPStatus.DRAFT: frozenset({SOPStatus.APPROVED}),
    SOPStatus.APPROVED: frozenset({SOPStatus.SUPERSEDED}),
    SOPStatus.SUPERSEDED: frozenset(),
}

# A draft's metadata; once approved, an SOP's content is what people acknowledged.
SOP_EDITABLE_FIELDS = frozenset({"title", "version", "review_due", "document"})


@service_action
@transaction.atomic
def sop_create(*, laser: Laser, title: str, by: Person, summary: str = "", document: File | None = None) -> SOP:
    """A draft of the next version of ``laser``'s SOP."""
    # The laser is locked, so two drafts started at once cannot take the same version number.
    lock_for_decision(laser, field="laser")
    latest = SOP.objects.filter(laser=laser).aggregate(latest=Max("version"))["latest"] or 0
    sop = SOP(laser=laser, title=title, version=latest + 1, summary=summary)
    if document is not None:
        sop.document = document
    return validated_save(sop, by=by)


@service_action
@transaction.atomic
def sop_approve(*, sop: SOP, by: Person, review_due: datetime.date | None = None,
                approved_on: datetime.date | None = None) -> SOP:
    """Put a draft in force; the version it replaces becomes superseded."""
    require_role(by, Role.LSO, action="approve an SOP")
    lock_for_change(sop)
    require_transition(sop, current=sop.status, target=SOPStatus.APPROVED, allowed=SOP_TRANSITIONS)
    for previous in SOP.objects.filter(laser=sop.laser_id, status=SOPStatus.APPROVED):
        # A version retired while in force is superseded all the same.
        lock_for_change(previous, bookkeeping=True)
        previous.status = SOPStatus.SUPERSEDED
        validated_save(previous, by=by)
    sop.status = SOPStatus.APPROVED
    sop.approved_by = by
    sop.approved_on = approved_on or timezone.localdate()
    sop.review_due = review_due
    return validated_save(sop, by=by)


@service_action
@transaction.atomic
def sop_acknowledge(*, sop: SOP, person: Person, at: datetime.datetime | None = None) -> SOPAcknowledgement:
    """``person`` states they have read ``sop``; acknowledging twice keeps the first."""
    lock_for_decision(sop)
    if sop.status != SOPStatus.APPROVED:
        raise ValidationError({"sop": f"{sop} is {sop.get_status_display()}; only the approved version "
                                      "can be acknowledged."})
    existing = SOPAcknowledgement.objects.filter(sop=sop, person=person).first()
    if existing is not None:
        return existing
    acknowledgement = SOPAcknowledgement(sop=sop, person=person, acknowledged_at=at or timezone.now())
    return validated_save(acknowledgement, by=person)


@service_action
@transaction.atomic
def sop_update(*, sop: SOP, by: Person, **changes: Any) -> SOP:
    """Correct a draft's metadata (SOP_EDITABLE_FIELDS).

    An approved or superseded version is refused: people acknowledged that text, so a
    change is a new draft version, approved in its turn.
    """
    lock_for_change(sop)
    if sop.status != SOPStatus.DRAFT:
        raise StateError(field="status", message=(
            f"{sop} is {sop.get_status_display()}; its content cannot change. Upload a new draft version "
            "and have it approved instead."))
    return save_changes(sop, changes, editable=SOP_EDITABLE_FIELDS, what="an SOP", by=by)

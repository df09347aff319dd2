"""Writes for authorizations: request, decide, withdraw, revoke."""
from __future__ import annotations

import datetime

from django.core.exceptions import ValidationError
from django.db import transaction
from django.utils import timezone

from registry.models import Authorization, AuthorizationStatus, Laser, LaserStatus, Person, Role
from registry.selectors import authorization_missing_prerequisites
from registry.services._common import (
    lock_for_change,
    lock_for_decision,
    require_role,
    require_text,
    require_transition,
    validated_save,
)
from registry.services._logging import service_action
from registry.services.errors import PrerequisiteError

A = AuthorizationStatus

AUTHORIZATION_TRANSITIONS: dict[str, frozenset[str]] = {
    A.REQUESTED: frozenset({A.APPROVED, A.REFUSED, A.WITHDRAWN}),
    A.APPROVED: frozenset({A.REVOKED}),
    A.REFUSED: frozenset(),
    A.WITHDRAWN: frozenset(),
    A.REVOKED: frozenset(),
}


@service_action
@transaction.atomic
def authorization_request(*, person: Person, laser: Laser, by: Person, conditions: str = "") -> Authorization:
    """Ask for ``person`` to be authorized on ``laser`` (an active laser)."""
    lock_for_decision(laser, field="laser")
    if laser.status != LaserStatus.ACTIVE:
        raise ValidationError({"laser": f"{laser.asset_tag} is {laser.get_status_display()}; "
                                        "authorizations are requested for active lasers only."})
    authorization = Authorization(person=person, laser=laser, requested_by=by, requested_at=timezone.now(),
                                  conditions=conditions)
    return validated_save(authorization, by=by)


def _decide(authorization: Authorization, target: str, *, by: Person, reason: str) -> Authorization:
    """A decision on an authorization locked by lock_for_change."""
    require_transition(authorization, current=authorization.status, target=target, allowed=AUTHORIZATION_TRANSITIONS)
    authorization.status = target
    authorization.decided_by = by
    authorization.decided_at = timezone.now()
    authorization.decision_reason = reason
    return validated_save(authorization, by=by)


@service_action
@transaction.atomic
def authorization_approve(*, authorization: Authorization, by: Person, valid_until: datetime.date | None = None,
                          conditions: str | None = None, reason: str = "") -> Authorization:
    """Approve a request; refused while prerequisites are missing (valid training, SOP read)."""
    require_role(by, Role.LSO, action="approve an authorization")
    lock_for_change(authorization)
    require_transition(authorization, current=authorization.status, target=A.APPROVED,
                       allowed=AUTHORIZATION_TRANSITIONS)
    missing = authorization_missing_prerequisites(person=authorization.person, laser=authorization.laser)
    if missing:
        raise PrerequisiteError(field="person", missing=missing)
    authorization.valid_until = valid_until
    if conditions is not None:
        authorization.conditions = conditions
    return _decide(authorization, A.APPROVED, by=by, reason=reason)


@service_action
@transaction.atomic
def authorization_refuse(*, authorization: Authorization, by: Person, reason: str) -> Authorization:
    require_role(by, Role.LSO, action="refuse an authorization")
    text = require_text(reason, field="decision_reason", what="A reason for the refusal")
    lock_for_change(authorization)
    return _decide(authorization, A.REFUSED, by=by, reason=text)


@service_action
@transaction.atomic
def authorization_withdraw(*, authorization: Authorization, by: Person) -> Authorization:
    lock_for_change(authorization)
    require_transition(authorization, current=authorization.status, target=A.WITHDRAWN,
                       allowed=AUTHORIZATION_TRANSITIONS)
    authorization.status = A.WITHDRAWN
    return validated_save(authorization, by=by)


@service_action
@transaction.atomic
def authorization_revoke(*, authorization: Authorization, by: Person, reason: str) -> Authorization:
    require_role(by, Role.LSO, action="revoke an authorization")
    text = require_text(reason, field="decision_reason", what="A reason for the revocation")
    lock_for_change(authorization)
    return _decide(authorization, A.REVOKED, by=by, reason=text)

"""Writes for incidents: report, investigate, close with follow-up."""
from __future__ import annotations

import datetime
from collections.abc import Iterable
from typing import Any

from django.db import transaction
from django.utils import timezone

from registry.models import Incident, IncidentStatus, Laser, Location, Person, Role
from registry.services._common import (
    lock_for_change,
    require_role,
    require_text,
    require_transition,
    save_changes,
    validated_save,
)
from registry.services._logging import service_action
from registry.services.errors import StateError

INCIDENT_TRANSITIONS: dict[str, frozenset[str]] = {
    IncidentStatus.REPORTED: frozenset({IncidentStatus.INVESTIGATING, IncidentStatus.CLOSED}),
    IncidentStatus.INVESTIGATING: frozenset({IncidentStatus.CLOSED}),
    IncidentStatus.CLOSED: frozenset(),
}

# The account of what happened; the reference is its identity, the reporter stays who
# reported it, and the follow-up belongs to incident_close.
INCIDENT_EDITABLE_FIELDS = frozenset({"kind", "occurred_at", "laser", "location", "people_involved", "description"})


@service_action
@transaction.atomic
def incident_report(
    *,
    reference: str,
    kind: str,
    occurred_at: datetime.datetime,
    description: str,
    reported_by: Person,
    laser: Laser | None = None,
    location: Location | None = None,
    people_involved: Iterable[Person] = (),
) -> Incident:
    incident = validated_save(
        Incident(reference=reference, kind=kind, occurred_at=occurred_at, description=description,
                 reported_by=reported_by, laser=laser, location=location),
        by=reported_by,
    )
    incident.people_involved.set(list(people_involved))
    return incident


@service_action
@transaction.atomic
def incident_investigate(*, incident: Incident, by: Person) -> Incident:
    require_role(by, Role.LSO, action="open an incident investigation")
    lock_for_change(incident)
    require_transition(incident, current=incident.status, target=IncidentStatus.INVESTIGATING,
                       allowed=INCIDENT_TRANSITIONS)
    incident.status = IncidentStatus.INVESTIGATING
    return validated_save(incident, by=by)


@service_action
@transaction.atomic
def incident_close(*, incident: Incident, by: Person, follow_up: str,
                   at: datetime.datetime | None = None) -> Incident:
    require_role(by, Role.LSO, action="close an incident")
    lock_for_change(incident)
    require_transition(incident, current=incident.status, target=IncidentStatus.CLOSED, allowed=INCIDENT_TRANSITIONS)
    incident.follow_up = require_text(follow_up, field="follow_up", what="The follow-up")
    incident.status = IncidentStatus.CLOSED
    incident.closed_at = at or timezone.now()
    return validated_save(incident, by=by)


@service_action
@transaction.atomic
def incident_update(*, incident: Incident, by: Person, **changes: Any) -> Incident:
    """Correct the account of an incident (INCIDENT_EDITABLE_FIELDS) while it is open.

    Who may (the LSO, or the reporter) is the API policy's decision; the service refuses
    any change once the incident is closed.
    """
    lock_for_change(incident)
    if incident.status == IncidentStatus.CLOSED:
        raise StateError(field="status", message=f"{incident.reference} is closed; its account cannot change.")
    return save_changes(incident, changes, editable=INCIDENT_EDITABLE_FIELDS, what="an incident", by=by)

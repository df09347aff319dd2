"""Writes for audits: plan, start, answer the checklist, raise and close findings, sign off."""
from __future__ import annotations

import datetime
from collections.abc import Iterable, Sequence
from typing import Any, TypedDict

from django.core.exceptions import ValidationError
from django.db import transaction
from django.utils import timezone

from registry import selectors
from registry.models import (
    Audit,
    AuditChecklistItem,
    AuditStatus,
    ChecklistAnswer,
    Finding,
    FindingStatus,
    Laser,
    Location,
    Person,
    Role,
)
from registry.services._common import (
    lock_for_change,
    lock_for_decision,
    require_role,
    require_text,
    require_transition,
    save_changes,
    validated_save,
)
from registry.services._logging import service_action
from registry.services.checklist import checklist_for
from registry.services.errors import StateError

AUDIT_TRANSITIONS: dict[str, frozenset[str]] = {
    AuditStatus.PLANNED: frozenset({AuditStatus.IN_PROGRESS}),
    AuditStatus.IN_PROGRESS: frozenset({AuditStatus.SIGNED_OFF}),
    AuditStatus.SIGNED_OFF: frozenset(),
}

FINDING_TRANSITIONS: dict[str, frozenset[str]] = {
    FindingStatus.OPEN: frozenset({FindingStatus.CLOSED}),
    FindingStatus.CLOSED: frozenset(),
}

# The plan of an audit; the reference is its identity, the checklist is answered item by
# item, and the outcome (summary, sign-off) belongs to audit_sign_off.
AUDIT_EDITABLE_FIELDS = frozenset({"scope", "location", "lasers", "site", "planned_on", "period_start",
                                   "period_end", "auditor"})

# The follow-up of a finding; what was found stays as raised, and the closing evidence
# belongs to finding_close.
FINDING_EDITABLE_FIELDS = frozenset({"corrective_action", "owner", "due_on"})


@service_action
@transaction.atomic
def audit_plan(
    *,
    reference: str,
    scope: str,
    auditor: Person,
    planned_on: datetime.date,
    by: Person,
    location: Location | None = None,
    lasers: Iterable[Laser] = (),
    site: str = "",
    period_start: datetime.date | None = None,
    period_end: datetime.date | None = None,
    questions: Sequence[str] = (),
) -> Audit:
    """A planned audit with the plan's own checklist questions, in the order given.

    The control measures of the lasers in scope join the checklist when the audit starts.
    """
    require_role(by, Role.LSO, action="plan an audit")
    audit = validated_save(Audit(reference=reference, scope=scope, auditor=auditor, planned_on=planned_on,
                                 location=location, site=site, period_start=period_start,
                                 period_end=period_end), by=by)
    audit.lasers.set(list(lasers))
    for position, question in enumerate(questions, start=1):
        validated_save(AuditChecklistItem(audit=audit, position=position, question=question), by=by)
    return audit


@service_action
@transaction.atomic
def audit_start(*, audit: Audit, by: Person, conducted_on: datetime.date | None = None) -> Audit:
    """Start the audit and add to its checklist the control measures each laser in scope calls for
    (registry.services.checklist), drawn from the register as it is today, after the plan's own
    questions. A plan changed later keeps the checklist drawn here."""
    # Locked, so that two starts cannot both draw the checklist.
    lock_for_change(audit)
    require_transition(audit, current=audit.status, target=AuditStatus.IN_PROGRESS, allowed=AUDIT_TRANSITIONS)
    audit.status = AuditStatus.IN_PROGRESS
    audit.conducted_on = conducted_on or timezone.localdate()
    validated_save(audit, by=by)
    first = audit.checklist.count() + 1
    for position, entry in enumerate(checklist_for(selectors.audit_scope_lasers(audit)), start=first):
        validated_save(AuditChecklistItem(audit=audit, position=position, question=entry.question,
                                          control=entry.control.code, laser=entry.laser,
                                          location=entry.location), by=by)
    return audit


def _require_in_progress(audit: Audit, *, action: str) -> None:
    if audit.status != AuditStatus.IN_PROGRESS:
        raise ValidationError({"audit": f"{audit.reference} is {audit.get_status_display()}; "
                                        f"{action} only while it is in progress."})


class FailureFinding(TypedDict):
    """What a failed checklist item's finding needs: how bad, what to do, who does it, by when."""

    severity: str
    corrective_action: str
    owner: Person
    due_on: datetime.date


@service_action
@transaction.atomic
def audit_answer(*, item: AuditChecklistItem, answer: str, by: Person, comment: str = "",
                 finding: FailureFinding | None = None) -> AuditChecklistItem:
    """Answer one item: pass, fail or n/a, with a note.

    A failure raises a finding about the item's laser or room, described by the note, and
    needs ``finding`` (severity, corrective action, owner, due date) the first time; an item
    answered again keeps the finding it raised, which is followed up on its own.
    """
    # The audit first, as every step on an audit locks it: its state decides, and sign-off waits.
    _require_in_progress(lock_for_decision(item.audit), action="checklist answers can be given")
    lock_for_change(item)
    if answer == ChecklistAnswer.UNANSWERED:
        raise ValidationError({"answer": "Give an answer: pass, fail or n/a."})
    raised_before = item.findings.exists()
    if finding is not None and (answer != ChecklistAnswer.FAIL or raised_before):
        raise ValidationError({"finding": "Only the first failure of an item raises a finding."})
    if answer == ChecklistAnswer.FAIL and not raised_before:
        _raise_failure_finding(item, finding, comment=comment, by=by)
    item.answer = answer
    item.comment = comment
    return validated_save(item, by=by)


def _raise_failure_finding(item: AuditChecklistItem, finding: FailureFinding | None, *, comment: str,
                           by: Person) -> Finding:
    required = ("severity", "corrective_action", "owner", "due_on")
    missing = [name for name in required if finding is None or not finding.get(name)]
    if finding is None or missing:
        raise ValidationError({"finding": f"A failed item raises a finding; give its {', '.join(missing)}."})
    note = require_text(comment, field="comment", what="A note saying what failed")
    return validated_save(Finding(
        audit=item.audit, checklist_item=item, laser=item.laser,
        location=item.location or (item.laser.location if item.laser else None),
        description=f"{item.question}: {note}", severity=finding["severity"],
        corrective_action=finding["corrective_action"], owner=finding["owner"], due_on=finding["due_on"]), by=by)


@service_action
@transaction.atomic
def finding_raise(
    *,
    audit: Audit,
    severity: str,
    description: str,
    owner: Person,
    by: Person,
    laser: Laser | None = None,
    location: Location | None = None,
    corrective_action: str = "",
    due_on: datetime.date | None = None,
) -> Finding:
    _require_in_progress(lock_for_decision(audit), action="findings can be raised")
    finding = Finding(audit=audit, severity=severity, description=description, owner=owner, laser=laser,
                      location=location, corrective_action=corrective_action, due_on=due_on)
    return validated_save(finding, by=by)


@service_action
@transaction.atomic
def finding_close(*, finding: Finding, by: Person, evidence: str, closed_on: datetime.date | None = None) -> Finding:
    """Close a finding; the evidence (what was done, where it can be checked) is required."""
    lock_for_change(finding)
    require_transition(finding, current=finding.status, target=FindingStatus.CLOSED, allowed=FINDING_TRANSITIONS)
    finding.closure_evidence = require_text(evidence, field="closure_evidence", what="Evidence of the correction")
    finding.status = FindingStatus.CLOSED
    finding.closed_by = by
    finding.closed_on = closed_on or timezone.localdate()
    return validated_save(finding, by=by)


@service_action
@transaction.atomic
def audit_sign_off(*, audit: Audit, by: Person, summary: str | None = None,
                   at: datetime.datetime | None = None) -> Audit:
    """Sign an audit off once every checklist question is answered. Open findings stay
    open and are followed up on their own."""
    require_role(by, Role.LSO, action="sign off an audit")
    lock_for_change(audit)
    require_transition(audit, current=audit.status, target=AuditStatus.SIGNED_OFF, allowed=AUDIT_TRANSITIONS)
    unanswered = list(audit.checklist.filter(answer=ChecklistAnswer.UNANSWERED).values_list("position", flat=True))
    if unanswered:
        raise ValidationError({"checklist": f"{audit.reference} has unanswered checklist items: "
                                            f"{', '.join(f'#{position}' for position in unanswered)}."})
    if summary is not None:
        audit.summary = summary
    audit.status = AuditStatus.SIGNED_OFF
    audit.signed_off_by = by
    audit.signed_off_at = at or timezone.now()
    return validated_save(audit, by=by)


@service_action
@transaction.atomic
def audit_update(*, audit: Audit, by: Person, **changes: Any) -> Audit:
    """Change an audit's plan (AUDIT_EDITABLE_FIELDS) while it is planned or in progress."""
    require_role(by, Role.LSO, action="change an audit's plan")
    lock_for_change(audit)
    if audit.status == AuditStatus.SIGNED_OFF:
        raise StateError(field="status", message=f"{audit.reference} is signed off; its plan cannot change.")
    return save_changes(audit, changes, editable=AUDIT_EDITABLE_FIELDS, what="an audit", by=by)


@service_action
@transaction.atomic
def finding_update(*, finding: Finding, by: Person, **changes: Any) -> Finding:
    """Change a finding's follow-up (FINDING_EDITABLE_FIELDS) while it is open."""
    require_role(by, Role.LSO, action="change a finding")
    lock_for_change(finding)
    if finding.status != FindingStatus.OPEN:
        raise StateError(field="status", message=f"{finding} is {finding.get_status_display()}; "
                                                 "its follow-up cannot change.")
    return save_changes(finding, changes, editable=FINDING_EDITABLE_FIELDS, what="a finding", by=by)
